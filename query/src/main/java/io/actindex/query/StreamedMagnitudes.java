package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.encode.EncodeOptions;
import io.actindex.index.store.Magnitudes;
import java.util.Arrays;
import java.util.List;

/**
 * Kept magnitudes of a build without holding the floats: each unit's range needs every row before
 * the first row can be quantised, so the source is read twice. The first read (the one that makes
 * the codes) hands its floats to {@link Ranges}; {@link #quantise} reads the file again and
 * quantises chunk by chunk, to the same bytes {@link Magnitudes#quantise} gives for the floats in
 * one array. A file that changed between the two reads (other codes, other values) is refused.
 */
final class StreamedMagnitudes {
  private StreamedMagnitudes() {}

  /** The kept magnitudes and how they compare with the floats. */
  record Result(Magnitudes magnitudes, IndexBuilder.Quantisation quantisation) {}

  /**
   * The first read's floats: each unit's lowest and highest value (a value that is not finite is
   * refused when quantised), and a hash of every value in order. Magnitudes of more rows than one
   * array holds are refused before the file is read when it says how many rows it has.
   */
  static final class Ranges implements Encoding.FloatRows {
    private final Source source;
    private final List<String> layers;
    private final int bits;
    private float[] lo, hi;
    private long hash;

    /** For magnitudes of {@code bits} bits of the units of {@code layers} (null or empty: all) of {@code source}. */
    Ranges(Source source, List<String> layers, int bits) {
      this.source = source;
      this.layers = layers;
      this.bits = bits;
    }

    @Override
    public void start(long rows, CodeLayout layout) {
      int kept = 0;
      for (int s : Layers.select(layout, layers)) kept += layout.segments().get(s).bits();
      if (rows >= 0) checkSize(source, rows, kept, bits);
      int units = layout.bits();
      lo = new float[units];
      hi = new float[units];
      Arrays.fill(lo, Float.POSITIVE_INFINITY);
      Arrays.fill(hi, Float.NEGATIVE_INFINITY);
    }

    @Override
    public void accept(float[] values, int from, int rows) {
      int d = lo.length;
      for (int i = from * d, end = (from + rows) * d; i < end; i += d)
        for (int j = 0; j < d; j++) {
          float v = values[i + j];
          if (v < lo[j]) lo[j] = v;
          if (v > hi[j]) hi[j] = v;
        }
      hash = hash(hash, values, from * d, rows * d);
    }

    private static float[] pick(float[] a, int[] cols) {
      float[] out = new float[cols.length];
      for (int c = 0; c < cols.length; c++) out[c] = a[cols[c]];
      return out;
    }
  }

  /**
   * Reads {@code source} again as the first read did ({@code model}, {@code options}, {@code
   * codesLayout}, {@code chunk}) and quantises the units {@code cols} of its rows to {@code bits}
   * bits, with the ranges {@code ranges} of the first read, whose codes were {@code raw}.
   */
  static Result quantise(Source source, Encoding.Model model, EncodeOptions options, CodeLayout codesLayout, int chunk, Progress progress,
      CodeBlock raw, int[] cols, Ranges ranges, int bits) {
    int n = raw.size(), d = cols.length;
    checkSize(source, n, d, bits);
    Magnitudes.Builder kept = new Magnitudes.Builder(n, d, bits, Ranges.pick(ranges.lo, cols), Ranges.pick(ranges.hi, cols));
    IndexBuilder.Quantisation.Errors errors = new IndexBuilder.Quantisation.Errors(d);
    boolean all = cols.length == raw.layout().bits() && java.util.stream.IntStream.range(0, d).allMatch(i -> cols[i] == i);
    float[] row = new float[d], back = new float[d];
    long[] hash = {0};
    int[] done = {0};
    Encoding.FloatRows second = new Encoding.FloatRows() {
      private int width;

      @Override
      public void start(long rows, CodeLayout layout) {
        width = layout.bits();
      }

      @Override
      public void accept(float[] values, int from, int rows) {
        if (done[0] + rows > n) throw changed(source);
        hash[0] = hash(hash[0], values, from * width, rows * width);
        for (int i = from; i < from + rows; i++) {
          float[] src = values;
          int at = i * width;
          if (!all) {
            for (int c = 0; c < d; c++) row[c] = values[at + cols[c]];
            src = row;
            at = 0;
          }
          kept.add(src, at);
          kept.dequantise(done[0]++, back, 0);
          errors.add(back, src, at);
        }
      }
    };
    Encoding.Read again = Encoding.read(source, model, options, codesLayout, RowRange.ALL, chunk, progress, second);
    if (done[0] != n || hash[0] != ranges.hash || !again.codes().layout().equals(raw.layout())
        || !Arrays.equals(again.codes().words(), raw.words()))
      throw changed(source);
    Magnitudes m = kept.build();
    return new Result(m, errors.result(m));
  }

  /** Refuses {@code rows} rows of {@code units} magnitudes of {@code bits} bits when one array cannot hold them. */
  private static void checkSize(Source source, long rows, int units, int bits) {
    long most = Encoding.MAX_VALUES / Math.max(1, Magnitudes.rowBytes(units, bits));
    if (rows > most)
      throw new BadInputException(source.file() + ": " + rows + " rows of " + units + " units are more than one block of kept magnitudes holds ("
          + most + " rows of " + units + " at " + bits + " bits at most); split the file into parts of at most that many rows, build from one and add the others");
  }

  private static BadInputException changed(Source source) {
    Object file = source.kind() == Source.Kind.INPUTS ? source.file() + " (or the model " + source.model() + ")" : source.file();
    return new BadInputException(file + ": changed while the build read it (its kept magnitudes take a second read of the file); build"
        + " again from a file nothing writes to meanwhile");
  }

  /** {@code h} followed by {@code count} values from {@code values[from]}, bit for bit. */
  private static long hash(long h, float[] values, int from, int count) {
    for (int i = from, end = from + count; i < end; i++) h = h * 31 + Float.floatToRawIntBits(values[i]);
    return h;
  }
}
