package io.actindex.encode.io;

import java.io.IOException;

/**
 * Streams a numeric matrix row by row in chunks: rows are examples, columns neurons (or input
 * features). Never holds more than one chunk. Values are checked to be finite: a NaN or infinite
 * value is a {@link io.actindex.core.BadInputException} naming the file, row and column (0-based).
 */
public interface MatrixReader extends AutoCloseable {

  /** The file name used in error messages. */
  String source();

  /** Number of rows, or -1 if unknown until the end (CSV). */
  long rows();

  /** Values per row. */
  int cols();

  /** True if every value is exactly representable as a float, so {@link #read(float[], int)} works. */
  boolean exactInFloat();

  /** Rows returned so far. */
  long position();

  /**
   * Reads up to {@code maxRows} rows into {@code out} (row-major, from index 0); returns the rows
   * read, 0 at the end. Only when {@link #exactInFloat()}.
   */
  int read(float[] out, int maxRows) throws IOException;

  /** Reads up to {@code maxRows} rows into {@code out} (row-major); returns the rows read, 0 at the end. */
  int read(double[] out, int maxRows) throws IOException;

  /** The column names of a file that has them (a CSV header line), else null. */
  default java.util.List<String> columnNames() {
    return null;
  }

  /** How the file was read, one line each (e.g. a CSV header decision); empty by default. */
  default java.util.List<String> notes() {
    return java.util.List.of();
  }

  @Override
  void close() throws IOException;

  /** Opens a fresh reader at row 0 (streams may be read twice, e.g. for medians). */
  interface Factory {
    MatrixReader open() throws IOException;
  }
}
