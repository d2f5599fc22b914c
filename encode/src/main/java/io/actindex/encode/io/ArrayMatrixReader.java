package io.actindex.encode.io;

import java.util.Arrays;

/** A matrix already in memory (row-major doubles), read like a file: for single queries and tests. */
public final class ArrayMatrixReader implements MatrixReader {
  private final String name;
  private final double[] data;
  private final int cols;
  private final long rows;
  private long row;

  public ArrayMatrixReader(String name, double[] data, int cols) {
    if (cols <= 0 || data.length % cols != 0) throw new IllegalArgumentException(data.length + " values do not make rows of " + cols);
    this.name = name;
    this.data = data;
    this.cols = cols;
    this.rows = data.length / cols;
    for (int i = 0; i < data.length; i++)
      if (!Double.isFinite(data[i])) throw NpyReader.nonFinite(name, i / cols, i % cols, data[i]);
  }

  /** Rows given as arrays of equal length. */
  public static ArrayMatrixReader of(String name, double[][] rows) {
    int cols = rows.length == 0 ? 1 : rows[0].length;
    double[] d = new double[rows.length * cols];
    for (int i = 0; i < rows.length; i++) {
      if (rows[i].length != cols) throw new IllegalArgumentException("row " + i + " has " + rows[i].length + " values, row 0 has " + cols);
      System.arraycopy(rows[i], 0, d, i * cols, cols);
    }
    return new ArrayMatrixReader(name, d, cols);
  }

  @Override
  public String source() {
    return name;
  }

  @Override
  public long rows() {
    return rows;
  }

  @Override
  public int cols() {
    return cols;
  }

  @Override
  public boolean exactInFloat() {
    return false;
  }

  @Override
  public long position() {
    return row;
  }

  @Override
  public int read(float[] out, int maxRows) {
    throw new IllegalStateException("values are doubles");
  }

  @Override
  public int read(double[] out, int maxRows) {
    int m = (int) Math.min(maxRows, rows - row);
    if (m <= 0) return 0;
    System.arraycopy(data, (int) (row * cols), out, 0, m * cols);
    row += m;
    return m;
  }

  @Override
  public void close() {}

  @Override
  public String toString() {
    return name + Arrays.toString(new long[] {rows, cols});
  }
}
