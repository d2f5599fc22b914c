package io.actindex.encode;

import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import java.io.IOException;

/**
 * A stream of code chunks; rows are examples, in input order. Not thread-safe. Closing releases
 * the input files.
 */
public interface CodeStream extends AutoCloseable {
  CodeLayout layout();

  /** Total rows, or -1 if unknown (CSV). */
  long rows();

  /** The next chunk of at most {@code maxRows} (at least one) codes, or null at the end. */
  CodeBlock next(int maxRows) throws IOException;

  /** {@link #next}'s check of its argument: a {@code maxRows} below 1 is refused. */
  static void checkMaxRows(int maxRows) {
    if (maxRows < 1) throw new BadParameterException("maxRows", " must be at least 1, got " + maxRows);
  }

  /** Firing counts per neuron over the rows returned so far; dead and always-on neurons. */
  NeuronStats stats();

  /**
   * The options in force, with medians filled in once computed ({@link BinarizeRule#MEDIAN}); pass
   * them to {@link Encoders#describe} to store in the index. Null for pre-binarized codes.
   */
  default EncodeOptions options() {
    return null;
  }

  /**
   * The activations the last chunk of {@link #next} was binarized from, row-major, one value per
   * code bit in layout order (rows {@code 0..chunk size-1}); null for pre-binarized codes. The
   * array is the stream's own, valid until the next call of {@code next}.
   */
  default float[] lastActivations() {
    return null;
  }

  /**
   * As {@link #lastActivations()}; with {@code castFar} a value beyond float32's range (about
   * 3.4e38) is not refused but kept as Java's cast makes it, +-Infinity (a query's row is still
   * answered: its distances to kept magnitudes are infinite). NaN is refused either way.
   */
  default float[] lastActivations(boolean castFar) {
    return lastActivations();
  }

  /**
   * How the input was read and interpreted, one line each: a CSV header decision, a model's layer
   * order, code layers and output layer. Empty by default.
   */
  default java.util.List<String> notes() {
    return java.util.List.of();
  }

  /**
   * The column names of the file read, when it has them (a CSV header line; for a model, its
   * inputs' header), else null. Columns are read by position; the names let a later file be
   * checked against the one an index was built from.
   */
  default java.util.List<String> columnNames() {
    return null;
  }

  @Override
  void close() throws IOException;
}
