package io.actindex.query;

import io.actindex.encode.CodeStream;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Path;
import java.util.Arrays;

/**
 * Reads a {@link Source} to codes, chunk by chunk: at most one chunk of floats is alive at a time,
 * the codes are kept. Package-private plumbing of {@link IndexBuilder} and {@link QuerySource}.
 */
final class Encoding {
  private Encoding() {}

  /** Default rows per chunk. */
  static final int CHUNK = 4096;

  /**
   * The codes read, the encoding options in force (medians and a model's layer order filled in;
   * null for a codes file), how the input was read ({@link CodeStream#notes()}), and, when asked
   * for, the activations the codes came from (row-major, one value per code bit of the source
   * layout; null for a codes file or when not asked for), and the column names of the file read
   * (its CSV header; a model's inputs' header) or null.
   */
  record Read(CodeBlock codes, EncodeOptions options, java.util.List<String> notes, float[] activations, java.util.List<String> columns) {}

  /** A model for inputs: a file the user gave, or the bytes an index stores (named for messages). */
  record Model(Path file, String name, byte[] bytes) {
    static Model of(Path file) {
      return file == null ? null : new Model(file, file.toString(), null);
    }
  }

  /**
   * Encodes the rows of {@code range} from {@code source}. {@code model} is the model for inputs;
   * {@code codesLayout} goes to {@link Encoders#codes} (may be null).
   */
  static Read read(Source source, Model model, EncodeOptions options, CodeLayout codesLayout, RowRange range,
      int chunk, Progress progress) {
    return read(source, model, options, codesLayout, range, chunk, progress, false);
  }

  /** As above; with {@code activations} the floats of the kept rows are kept too (4 bytes per value). */
  static Read read(Source source, Model model, EncodeOptions options, CodeLayout codesLayout, RowRange range,
      int chunk, Progress progress, boolean activations) {
    return read(source, model, options, codesLayout, range, chunk, progress, activations ? KEEP_ALL : 0);
  }

  /** {@code keep} of {@link #read(Source, Model, EncodeOptions, CodeLayout, RowRange, int, Progress, long)}: every float, or a refusal. */
  static final long KEEP_ALL = -1;

  /**
   * {@code keep}: as {@link #KEEP_ALL}, but a value beyond float32's range is kept as +-Infinity
   * instead of refused ({@link CodeStream#lastActivations(boolean)}): a query's rows, each answered.
   */
  static final long KEEP_ALL_CAST = -2;

  /**
   * As above, keeping the floats of the kept rows ({@code activations} of the result) when they are at
   * most {@code keep} values: past it none are kept (null, without a second read of the file); {@link
   * #KEEP_ALL}: all of them, a file whose floats cannot fit one array refused; {@link #KEEP_ALL_CAST}: the
   * same, values beyond float32's range as +-Infinity; 0: none.
   */
  static Read read(Source source, Model model, EncodeOptions options, CodeLayout codesLayout, RowRange range,
      int chunk, Progress progress, long keep) {
    Kept kept = keep != 0 && source.kind() != Source.Kind.CODES ? new Kept(source, keep) : null;
    Read read = read(source, model, options, codesLayout, range, chunk, progress, kept);
    return kept == null ? read : new Read(read.codes(), read.options(), read.notes(), kept.values(read.codes().size()), read.columns());
  }

  /**
   * Takes the floats of the kept rows chunk by chunk, in row order (a codes file has none): {@link
   * #start} once the row count ({@code -1} when not known in advance) and the layout (one unit per
   * code bit) are known, then {@code rows} rows of {@code units} values at {@code values[from *
   * units ..]}, an array the stream reuses after the call.
   */
  interface FloatRows {
    void start(long rows, CodeLayout layout);

    void accept(float[] values, int from, int rows);

    /** Whether values beyond float32's range come as +-Infinity rather than refused ({@link CodeStream#lastActivations(boolean)}). */
    default boolean castFar() {
      return false;
    }
  }

  /**
   * As above, handing the floats of the kept rows to {@code floats} (null: none) instead of keeping
   * them, so that no more than one chunk of them is alive at a time.
   */
  static Read read(Source source, Model model, EncodeOptions options, CodeLayout codesLayout, RowRange range,
      int chunk, Progress progress, FloatRows floats) {
    try (CodeStream stream = open(source, model, options, codesLayout)) {
      long total = stream.rows();
      CodeLayout layout = stream.layout();
      int w = layout.words(), d = layout.bits();
      // the row count is known for every file source: one array of the final size, no copies
      long expect = total < 0 ? -1 : Math.min(total, range.to() == -1 ? total : range.to()) - Math.max(0, range.from());
      long[] buf = new long[(int) Math.min(Math.max(expect < 0 ? 1024 : expect, 0) * w, 1 << 26)]; // beyond 512 MB it grows as read
      FloatRows sink = source.kind() == Source.Kind.CODES ? null : floats;
      if (sink != null) sink.start(expect, layout);
      int kept = 0;
      long row = 0;
      progress.update(0, total);
      for (CodeBlock block; (block = stream.next(chunk)) != null; ) {
        if (!block.layout().equals(layout))
          throw new IllegalStateException(source.file() + ": the encoder changed layout mid-stream: " + layout + " then " + block.layout());
        long[] words = block.words();
        int first = -1, keptHere = 0; // the kept rows of a chunk are consecutive (a range of rows)
        for (int i = 0; i < block.size(); i++, row++) {
          if (!range.contains(row)) continue;
          if ((long) (kept + 1) * w > MAX_VALUES) throw new BadInputException(source.file() + ": too many rows to hold as one block (" + row + ")");
          if ((kept + 1) * w > buf.length) buf = Arrays.copyOf(buf, Math.max((kept + 1) * w, buf.length * 2));
          System.arraycopy(words, i * w, buf, kept * w, w);
          if (first < 0) first = i;
          keptHere++;
          kept++;
        }
        if (sink != null && keptHere > 0) sink.accept(stream.lastActivations(sink.castFar()), first, keptHere);
        progress.update(row, total);
        if (range.to() != -1 && row >= range.to()) break;
      }
      if ((range.to() != -1 && row < range.to()) || (range.from() > 0 && range.from() >= row))
        throw new BadInputException(source.file() + ": `rows` " + range + " asked, the file has " + row + (row == 1 ? " row" : " rows"));
      return new Read(new CodeBlock(layout, kept, buf.length == kept * w ? buf : Arrays.copyOf(buf, kept * w)),
          stream.options(), stream.notes(), null, stream.columnNames());
    } catch (IOException e) {
      throw new UncheckedIOException(source.file() + ": " + e.getMessage(), e);
    }
  }

  /**
   * Keeps the floats in one array: of the final size when the row count is known (doubling from a
   * small one allocated and copied about three times the floats, and held two copies at once at the end).
   */
  private static final class Kept implements FloatRows {
    private final Source source;
    private final long cap; // most values kept (past it none), or KEEP_ALL
    private final boolean castFar; // KEEP_ALL_CAST
    private float[] act;
    private int units, rows;
    private boolean over; // past the cap: nothing kept

    Kept(Source source, long keep) {
      this.source = source;
      this.castFar = keep == KEEP_ALL_CAST;
      this.cap = castFar ? KEEP_ALL : keep;
    }

    @Override
    public boolean castFar() {
      return castFar;
    }

    @Override
    public void start(long expect, CodeLayout layout) {
      units = layout.bits();
      over = cap != KEEP_ALL && expect * units > cap;
      if (over) return;
      if (expect >= 0 && expect * units > MAX_VALUES) throw tooManyRows(source, expect + " rows", units);
      act = new float[(int) (Math.max(expect < 0 ? 1024 : expect, 1) * units)];
    }

    @Override
    public void accept(float[] values, int from, int n) {
      if (over) return;
      long need = (long) (rows + n) * units;
      if (cap != KEEP_ALL && need > cap) {
        over = true;
        act = null;
        return;
      }
      if (need > MAX_VALUES) throw tooManyRows(source, "more than " + MAX_VALUES / units + " rows", units);
      if (need > act.length) act = Arrays.copyOf(act, (int) Math.min(cap == KEEP_ALL ? MAX_VALUES : cap, Math.max(need, act.length * 2L)));
      System.arraycopy(values, from * units, act, rows * units, n * units);
      rows += n;
    }

    float[] values(int n) {
      if (over) return null;
      return act.length == n * units ? act : Arrays.copyOf(act, n * units);
    }
  }

  /** Values one Java array holds at most. */
  static final long MAX_VALUES = Integer.MAX_VALUE - 16;

  /** The activations of {@code rows} rows of {@code d} units, kept as floats, would not fit in one array. */
  private static BadInputException tooManyRows(Source source, String rows, int d) {
    return new BadInputException(source.file() + ": " + rows + " of " + d + " activations are more than one block of kept floats holds ("
        + MAX_VALUES / d + " rows of " + d + " at most); split the file into parts of at most that many rows");
  }

  private static CodeStream open(Source source, Model model, EncodeOptions options, CodeLayout codesLayout) throws IOException {
    return switch (source.kind()) {
      case ACTIVATIONS -> Encoders.activations(source.file(), options, source.header());
      case CODES -> Encoders.codes(source.file(), codesLayout);
      case INPUTS -> model.bytes() != null ? Encoders.model(model.name(), model.bytes(), source.file(), options, source.header())
          : Encoders.model(model.file(), source.file(), options, source.header());
    };
  }
}
