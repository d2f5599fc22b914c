package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import java.util.ArrayList;
import java.util.List;

/**
 * Layer (segment) helpers shared by the operations: choosing layers by name, masks, per-layer
 * distances, neuron names ({@code layer:unit}, unit counted from 0 within its layer) and moving
 * codes between layouts.
 */
public final class Layers {
  private Layers() {}

  /**
   * Segment indexes of the named layers in the given order; {@code null} or empty = every layer.
   * An unknown or repeated name is a {@link BadInputException} listing the known layers.
   */
  public static int[] select(CodeLayout layout, List<String> names) {
    int count = layout.segments().size();
    if (names == null || names.isEmpty()) {
      int[] all = new int[count];
      for (int i = 0; i < count; i++) all[i] = i;
      return all;
    }
    int[] out = new int[names.size()];
    for (int i = 0; i < out.length; i++) {
      String name = names.get(i);
      int s = layout.indexOf(name);
      if (s < 0) throw new BadParameterException("layers", ": unknown layer '" + name + "' (the layers are " + names(layout) + ")");
      for (int j = 0; j < i; j++)
        if (out[j] == s) throw new BadParameterException("layers", ": layer '" + name + "' is chosen twice");
      out[i] = s;
    }
    return out;
  }

  /** A search mask for the named layers, or {@code null} (all bits) when none are named. */
  public static long[] maskOrNull(CodeLayout layout, List<String> names) {
    return names == null || names.isEmpty() ? null : layout.mask(select(layout, names));
  }

  /**
   * Refuses a Hamming radius above the width of the chosen layers (all when none are named): no two
   * codes differ in more bits, so such a radius only says the caller mistook the width.
   */
  public static void checkRadius(CodeLayout layout, List<String> names, int radius) {
    int bits = 0;
    for (int s : select(layout, names)) bits += layout.segments().get(s).bits();
    if (radius > bits)
      throw new BadParameterException("radius", " " + radius + " is larger than the code length, " + bits + " bits"
          + (names == null || names.isEmpty() ? "" : " on layers " + String.join(",", names)));
  }

  /** The layer names of a layout, comma separated. */
  public static String names(CodeLayout layout) {
    List<String> out = new ArrayList<>();
    for (CodeLayout.Segment s : layout.segments()) out.add(s.name());
    return String.join(", ", out);
  }

  /** One mask per segment, in layout order. */
  public static long[][] segmentMasks(CodeLayout layout) {
    long[][] masks = new long[layout.segments().size()][];
    for (int s = 0; s < masks.length; s++) masks[s] = layout.mask(s);
    return masks;
  }

  /** The name of bit {@code bit}: {@code layer:unit}. */
  public static String neuron(CodeLayout layout, int bit) {
    int start = 0;
    for (CodeLayout.Segment s : layout.segments()) {
      if (bit < start + s.bits()) return s.name() + ":" + (bit - start);
      start += s.bits();
    }
    throw new IllegalArgumentException("bit " + bit + " is beyond the layout's " + layout.bits() + " bits");
  }

  /** Names of the bits set in {@code bits} (a code-sized word array), in bit order. */
  public static List<String> neurons(CodeLayout layout, long[] bits) {
    List<String> out = new ArrayList<>();
    for (int w = 0; w < bits.length; w++)
      for (long word = bits[w]; word != 0; word &= word - 1)
        out.add(neuron(layout, (w << 6) + Long.numberOfTrailingZeros(word)));
    return out;
  }

  /** The same codes under another layout of the same total width (names only change). */
  public static CodeBlock relabel(CodeBlock codes, CodeLayout target) {
    if (codes.layout().bits() != target.bits())
      throw new IllegalArgumentException("cannot relabel " + codes.layout() + " as " + target);
    return codes.layout().equals(target) ? codes : new CodeBlock(target, codes.size(), codes.words());
  }

  /** Keeps the segments of {@code target}, found by name (with equal widths) in the codes' layout. */
  public static CodeBlock project(CodeBlock codes, CodeLayout target) {
    CodeLayout from = codes.layout();
    if (from.equals(target)) return codes;
    int n = codes.size(), wIn = from.words(), wOut = target.words();
    long[] in = codes.words(), out = new long[n * wOut];
    int dst = 0;
    for (int t = 0; t < target.segments().size(); t++) {
      CodeLayout.Segment seg = target.segments().get(t);
      int s = from.indexOf(seg.name());
      if (s < 0 || from.segments().get(s).bits() != seg.bits())
        throw new IllegalArgumentException("layout " + from + " has no segment " + seg.name() + ":" + seg.bits());
      int src = from.start(s);
      for (int i = 0; i < n; i++)
        for (int b = 0; b < seg.bits(); b++) {
          int sb = src + b, db = dst + b;
          if ((in[i * wIn + (sb >>> 6)] >>> (sb & 63) & 1L) != 0) out[i * wOut + (db >>> 6)] |= 1L << (db & 63);
        }
      dst += seg.bits();
    }
    return new CodeBlock(target, n, out);
  }

  /** True when every segment of {@code want} appears by name with the same width in {@code got}. */
  static boolean containsAll(CodeLayout got, CodeLayout want) {
    for (CodeLayout.Segment seg : want.segments()) {
      int s = got.indexOf(seg.name());
      if (s < 0 || got.segments().get(s).bits() != seg.bits()) return false;
    }
    return true;
  }

  /**
   * Brings codes read from {@code file} to the index layout {@code target}. Accepted: the same
   * layout; a single-segment layout of the same total width (e.g. a {@code .npy} named after its
   * file stem); a layout of the same total width as {@code source} (the layout the index was built
   * from, before layers were dropped) followed by keeping the indexed layers; or any layout that
   * holds every indexed layer by name. Anything else is a {@link BadInputException} that says the
   * expected and the given layout, in the words of what {@code file} holds ({@code kind}: codes,
   * activations, or inputs the model turned into these codes).
   */
  public static CodeBlock align(CodeBlock codes, CodeLayout target, CodeLayout source, String file, Source.Kind kind) {
    CodeLayout got = codes.layout();
    if (sameShape(got, target)) return relabel(codes, target);
    if (source != null && !source.equals(target) && sameShape(got, source)) return project(relabel(codes, source), target);
    if (containsAll(got, target)) return project(codes, target);
    String given = switch (kind) {
      case CODES -> "the codes have layout " + got + " (" + got.bits() + " bits)";
      case ACTIVATIONS -> "the activations have layout " + got + " (" + got.bits() + " columns, one per unit)";
      case INPUTS -> "through the model these inputs give codes of layout " + got + " (" + got.bits() + " bits)";
    };
    throw new BadInputException(file + ": " + given + "; the index expects "
        + target + " (" + target.bits() + " bits)"
        + (source != null && !source.equals(target) ? " or its source layout " + source : "") + renamedHint(got, target));
  }

  /**
   * When the layers have the index's widths in its order under other names (activations hooked on
   * a network's ReLU modules are named after those, not after the linear layers the index names),
   * a hint to save them under the index's names; they are not matched by position silently, since
   * equal widths do not make the same layers.
   */
  private static String renamedHint(CodeLayout got, CodeLayout target) {
    List<CodeLayout.Segment> g = got.segments(), t = target.segments();
    if (g.size() != t.size() || g.size() < 2) return "";
    for (int i = 0; i < g.size(); i++) if (g.get(i).bits() != t.get(i).bits()) return "";
    List<String> names = t.stream().map(CodeLayout.Segment::name).toList();
    return ". The layers have the index's widths in its order under other names (activations hooked on the ReLU modules"
        + " rather than the linear layers, say): if they are the same layers, save them under the names " + String.join(", ", names);
  }

  /**
   * For each bit of {@code target}, the bit (column) of {@code got} that {@link #align} takes it
   * from; call {@code align} first, which refuses layouts that do not fit.
   */
  static int[] alignColumns(CodeLayout got, CodeLayout target, CodeLayout source) {
    if (sameShape(got, target)) return java.util.stream.IntStream.range(0, target.bits()).toArray();
    return columns(source != null && !source.equals(target) && sameShape(got, source) ? source : got, target);
  }

  /** For each bit of {@code target}, the bit of {@code from} with the same segment name and unit. */
  static int[] columns(CodeLayout from, CodeLayout target) {
    int[] cols = new int[target.bits()];
    int dst = 0;
    for (CodeLayout.Segment seg : target.segments()) {
      int s = from.indexOf(seg.name());
      if (s < 0 || from.segments().get(s).bits() != seg.bits())
        throw new IllegalArgumentException("layout " + from + " has no segment " + seg.name() + ":" + seg.bits());
      for (int b = 0; b < seg.bits(); b++) cols[dst + b] = from.start(s) + b;
      dst += seg.bits();
    }
    return cols;
  }

  /** The columns {@code cols} of {@code n} rows of {@code width} values (row-major). */
  static float[] pickColumns(float[] values, int n, int width, int[] cols) {
    if (cols.length == width && java.util.stream.IntStream.range(0, width).allMatch(i -> cols[i] == i)) return values;
    float[] out = new float[Math.multiplyExact(n, cols.length)];
    for (int i = 0; i < n; i++)
      for (int c = 0; c < cols.length; c++) out[i * cols.length + c] = values[i * width + cols[c]];
    return out;
  }

  private static boolean sameShape(CodeLayout got, CodeLayout want) {
    if (got.bits() != want.bits()) return false;
    if (got.segments().size() == 1) return true;
    return got.equals(want);
  }
}
