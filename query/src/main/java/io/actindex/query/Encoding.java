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
    try (CodeStream stream = open(source, model, options, codesLayout)) {
      long total = stream.rows();
      CodeLayout layout = stream.layout();
      int w = layout.words(), d = layout.bits();
      // the row count is known for every file source: one array of the final size, no copies
      long expect = total < 0 ? 1024 : Math.min(total, range.to() == -1 ? total : range.to()) - Math.max(0, range.from());
      long[] buf = new long[(int) Math.min(Math.max(expect, 0) * w, 1 << 26)]; // beyond 512 MB it grows as read
      // the floats likewise: one array of the final size when the count is known (doubling from a small one
      // allocated and copied about three times the floats, and held two copies at once at the end)
      boolean keep = activations && source.kind() != Source.Kind.CODES;
      if (keep && total >= 0 && expect * d > MAX_VALUES) throw tooManyRows(source, expect + " rows", d);
      float[] act = keep ? new float[(int) (Math.max(total < 0 ? 1024 : expect, 1) * d)] : null;
      int kept = 0;
      long row = 0;
      progress.update(0, total);
      for (CodeBlock block; (block = stream.next(chunk)) != null; ) {
        if (!block.layout().equals(layout))
          throw new IllegalStateException(source.file() + ": the encoder changed layout mid-stream: " + layout + " then " + block.layout());
        long[] words = block.words();
        float[] values = act == null ? null : stream.lastActivations();
        for (int i = 0; i < block.size(); i++, row++) {
          if (!range.contains(row)) continue;
          if ((long) (kept + 1) * w > MAX_VALUES) throw new BadInputException(source.file() + ": too many rows to hold as one block (" + row + ")");
          if (act != null && (long) (kept + 1) * d > MAX_VALUES) throw tooManyRows(source, "more than " + kept + " rows", d);
          if ((kept + 1) * w > buf.length) buf = Arrays.copyOf(buf, Math.max((kept + 1) * w, buf.length * 2));
          System.arraycopy(words, i * w, buf, kept * w, w);
          if (act != null) {
            if ((kept + 1) * d > act.length) act = Arrays.copyOf(act, (int) Math.min(MAX_VALUES, Math.max((long) (kept + 1) * d, act.length * 2L)));
            System.arraycopy(values, i * d, act, kept * d, d);
          }
          kept++;
        }
        progress.update(row, total);
        if (range.to() != -1 && row >= range.to()) break;
      }
      if ((range.to() != -1 && row < range.to()) || (range.from() > 0 && range.from() >= row))
        throw new BadInputException(source.file() + ": rows " + range + " asked, the file has " + row + " rows");
      return new Read(new CodeBlock(layout, kept, buf.length == kept * w ? buf : Arrays.copyOf(buf, kept * w)),
          stream.options(), stream.notes(), act == null ? null : act.length == kept * d ? act : Arrays.copyOf(act, kept * d), stream.columnNames());
    } catch (IOException e) {
      throw new UncheckedIOException(source.file() + ": " + e.getMessage(), e);
    }
  }

  /** Values one Java array holds at most. */
  private static final long MAX_VALUES = Integer.MAX_VALUE - 16;

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
