package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.encode.EncodeOptions;
import io.actindex.index.store.Magnitudes;
import java.util.Arrays;
import java.util.function.Function;

/**
 * Kept magnitudes of a build or an add without holding the floats: each unit's range needs every
 * row before the first row can be quantised, so the source is read twice. The first read (the one
 * that makes the codes) hands its floats to {@link Ranges}; {@link #quantise} reads the file again
 * and quantises chunk by chunk, to the same bytes {@link Magnitudes#quantise} gives for the kept
 * units' floats in one array. A file that changed between the two reads (other codes, other
 * values) is refused.
 */
final class StreamedMagnitudes {
  private StreamedMagnitudes() {}

  /** The kept magnitudes and how they compare with the floats. */
  record Result(Magnitudes magnitudes, IndexBuilder.Quantisation quantisation) {}

  /**
   * The first read's floats: the lowest and highest value of each kept unit (a value that is not
   * finite is refused when quantised), and a hash of every value read, in order. Magnitudes of more
   * rows than one array holds are refused before the file is read when it says how many rows it has.
   */
  static final class Ranges implements Encoding.FloatRows {
    private final Source source;
    private final String command;
    private final Function<CodeLayout, int[]> columns;
    private final boolean relu;
    private final int bits;
    private int[] cols;
    private int width;
    private float[] lo, hi;
    private long hash;
    private boolean negative;

    /**
     * For magnitudes of {@code bits} bits, read by {@code command} ("build", "add": for messages),
     * of the units {@code columns} gives for the layout of {@code source} (the columns of the kept
     * layout, in its order); with {@code relu} a negative value is taken as 0.
     */
    Ranges(Source source, String command, Function<CodeLayout, int[]> columns, boolean relu, int bits) {
      this.source = source;
      this.command = command;
      this.columns = columns;
      this.relu = relu;
      this.bits = bits;
    }

    @Override
    public void start(long rows, CodeLayout layout) {
      cols = columns.apply(layout);
      width = layout.bits();
      if (rows >= 0) checkSize(source, rows, cols.length, bits);
      lo = new float[cols.length];
      hi = new float[cols.length];
      Arrays.fill(lo, Float.POSITIVE_INFINITY);
      Arrays.fill(hi, Float.NEGATIVE_INFINITY);
    }

    @Override
    public void accept(float[] values, int from, int rows) {
      int d = cols.length;
      for (int i = from; i < from + rows; i++)
        for (int c = 0, at = i * width; c < d; c++) {
          float v = values[at + cols[c]];
          if (relu && v < 0) {
            negative = true;
            v = 0;
          }
          if (v < lo[c]) lo[c] = v;
          if (v > hi[c]) hi[c] = v;
        }
      hash = hash(hash, values, from * width, rows * width);
    }

    /** Whether a kept unit had a negative value, taken as 0 ({@code relu}). */
    boolean negative() {
      return negative;
    }

    /** The kept units' values of row {@code i} of {@code values} into {@code row}, negative ones as 0 with {@code relu}. */
    void pick(float[] values, int i, float[] row) {
      for (int c = 0, at = i * width; c < cols.length; c++) {
        float v = values[at + cols[c]];
        row[c] = relu && v < 0 ? 0 : v;
      }
    }
  }

  /** A bar over both reads: the first read fills its first half. */
  static Progress firstRead(Progress bar) {
    return (done, total) -> bar.update(done, total < 0 ? -1 : 2 * total);
  }

  /** A bar over both reads: the second read fills its second half. */
  static Progress secondRead(Progress bar) {
    return (done, total) -> bar.update(total < 0 ? done : total + done, total < 0 ? -1 : 2 * total);
  }

  /**
   * Reads the rows {@code range} of {@code source} again as the first read did ({@code model},
   * {@code options}, {@code codesLayout}, {@code chunk}) and quantises their kept units with the
   * ranges {@code ranges} of the first read, whose codes were {@code raw}.
   */
  static Result quantise(Source source, Encoding.Model model, EncodeOptions options, CodeLayout codesLayout, RowRange range, int chunk,
      Progress progress, CodeBlock raw, Ranges ranges) {
    int n = raw.size(), d = ranges.cols.length;
    checkSize(source, n, d, ranges.bits);
    Magnitudes.Builder kept = new Magnitudes.Builder(n, d, ranges.bits, ranges.lo, ranges.hi);
    IndexBuilder.Quantisation.Errors errors = new IndexBuilder.Quantisation.Errors(d);
    float[] row = new float[d], back = new float[d];
    long[] hash = {0};
    int[] done = {0};
    Encoding.FloatRows second = new Encoding.FloatRows() {
      @Override
      public void start(long rows, CodeLayout layout) {
        if (layout.bits() != ranges.width) throw changed(source, ranges.command);
      }

      @Override
      public void accept(float[] values, int from, int rows) {
        if (done[0] + rows > n) throw changed(source, ranges.command);
        hash[0] = hash(hash[0], values, from * ranges.width, rows * ranges.width);
        for (int i = from; i < from + rows; i++) {
          ranges.pick(values, i, row);
          kept.add(row, 0);
          kept.dequantise(done[0]++, back, 0);
          errors.add(back, row, 0);
        }
      }
    };
    Encoding.Read again = Encoding.read(source, model, options, codesLayout, range, chunk, progress, second);
    if (done[0] != n || hash[0] != ranges.hash || !again.codes().layout().equals(raw.layout())
        || !Arrays.equals(again.codes().words(), raw.words()))
      throw changed(source, ranges.command);
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

  private static BadInputException changed(Source source, String command) {
    Object file = source.kind() == Source.Kind.INPUTS && source.model() != null ? source.file() + " (or the model " + source.model() + ")"
        : source.file();
    return new BadInputException(file + ": changed while the " + command + " read it (its kept magnitudes take a second read of the file); "
        + command + " again from a file nothing writes to meanwhile");
  }

  /** {@code h} followed by {@code count} values from {@code values[from]}, bit for bit. */
  private static long hash(long h, float[] values, int from, int count) {
    for (int i = from, end = from + count; i < end; i++) h = h * 31 + Float.floatToRawIntBits(values[i]);
    return h;
  }
}
