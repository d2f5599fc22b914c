package io.actindex.encode;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import java.util.ArrayList;
import java.util.List;

/**
 * Per-neuron firing counts over the codes of a stream: how many rows had each bit set. A neuron
 * that never fires on these rows is dead for them, one that fires on every row always-on; both carry
 * no information for searching these rows and are reported, not hidden (over few rows either says
 * little about other inputs: the census calls a unit dead only from enough rows). Counting uses byte-lane accumulators (8 neurons per long,
 * flushed every 255 rows), so it costs about one table lookup per 8 bits. Not thread-safe.
 */
public final class NeuronStats {
  private static final long[] SPREAD = new long[256];

  static {
    for (int v = 0; v < 256; v++) {
      long s = 0;
      for (int j = 0; j < 8; j++) if ((v >>> j & 1) != 0) s |= 1L << (8 * j);
      SPREAD[v] = s;
    }
  }

  private final CodeLayout layout;
  private final long[] counts;
  private final long[] lanes; // words * 8 accumulators of 8 byte lanes each
  private int pending; // rows in lanes not yet flushed
  private long rows;

  public NeuronStats(CodeLayout layout) {
    this.layout = layout;
    this.counts = new long[layout.words() * 64];
    this.lanes = new long[layout.words() * 8];
  }

  /** Counts the bits of every code in {@code block}. */
  public void add(CodeBlock block) {
    long[] w = block.words();
    int words = block.wordsPerCode();
    for (int i = 0; i < block.size(); i++) {
      int off = i * words;
      for (int k = 0; k < words; k++) {
        long x = w[off + k];
        if (x == 0) continue;
        int l = k << 3;
        lanes[l] += SPREAD[(int) x & 0xff];
        lanes[l + 1] += SPREAD[(int) (x >>> 8) & 0xff];
        lanes[l + 2] += SPREAD[(int) (x >>> 16) & 0xff];
        lanes[l + 3] += SPREAD[(int) (x >>> 24) & 0xff];
        lanes[l + 4] += SPREAD[(int) (x >>> 32) & 0xff];
        lanes[l + 5] += SPREAD[(int) (x >>> 40) & 0xff];
        lanes[l + 6] += SPREAD[(int) (x >>> 48) & 0xff];
        lanes[l + 7] += SPREAD[(int) (x >>> 56) & 0xff];
      }
      if (++pending == 255) flush();
    }
    rows += block.size();
  }

  private void flush() {
    for (int l = 0; l < lanes.length; l++) {
      long v = lanes[l];
      if (v == 0) continue;
      int base = l << 3; // lane l covers bits 8*(l%8) .. of word l/8 -> global bit (l/8)*64 + (l%8)*8
      for (int j = 0; j < 8; j++) counts[base + j] += (v >>> (8 * j)) & 0xff;
      lanes[l] = 0;
    }
    pending = 0;
  }

  public CodeLayout layout() {
    return layout;
  }

  /** Rows counted. */
  public long rows() {
    return rows;
  }

  /** How many rows had bit {@code bit} set. */
  public long firing(int bit) {
    flush();
    return counts[bit];
  }

  /** Firing count of every bit of the layout. */
  public long[] firingCounts() {
    flush();
    return java.util.Arrays.copyOf(counts, layout.bits());
  }

  /** Bits that were never set (empty while no rows were counted). */
  public int[] dead() {
    return select(false);
  }

  /** Bits that were set on every row (empty while no rows were counted). */
  public int[] alwaysOn() {
    return select(true);
  }

  private int[] select(boolean on) {
    if (rows == 0) return new int[0];
    flush();
    return java.util.stream.IntStream.range(0, layout.bits()).filter(b -> on ? counts[b] == rows : counts[b] == 0).toArray();
  }

  /** Per-layer summary of neurons, dead and always-on. */
  public record LayerSummary(String layer, int neurons, int dead, int alwaysOn) {}

  public List<LayerSummary> perLayer() {
    int[] dead = dead(), on = alwaysOn();
    List<LayerSummary> out = new ArrayList<>();
    for (int s = 0; s < layout.segments().size(); s++) {
      int from = layout.start(s), to = from + layout.segments().get(s).bits();
      out.add(new LayerSummary(layout.segments().get(s).name(), to - from, countIn(dead, from, to), countIn(on, from, to)));
    }
    return out;
  }

  private static int countIn(int[] sorted, int from, int to) {
    int c = 0;
    for (int b : sorted) if (b >= from && b < to) c++;
    return c;
  }

  /** One line per layer, e.g. {@code "fc1: 64 neurons, 3 dead, 1 always on"}. */
  public String summary() {
    StringBuilder sb = new StringBuilder();
    for (LayerSummary l : perLayer())
      sb.append(l.layer()).append(": ").append(l.neurons()).append(" neurons, ").append(l.dead()).append(" dead, ")
          .append(l.alwaysOn()).append(" always on (over ").append(rows).append(" rows)\n");
    return sb.toString();
  }
}
