package io.actindex.query.stats;

import io.actindex.core.BadParameterException;

/** {@code rows} x {@code cols} finite values, row-major. */
public record FloatSample(int rows, int cols, double[] values) {
  public FloatSample {
    if (values.length != (long) rows * cols) throw new BadParameterException("values", " has " + values.length + " entries; rows x cols needs " + (long) rows * cols);
  }

  /** The rows {@code pick[0], pick[1], ...} as a new sample. */
  public FloatSample select(int[] pick) {
    double[] out = new double[pick.length * cols];
    for (int i = 0; i < pick.length; i++) System.arraycopy(values, pick[i] * cols, out, i * cols, cols);
    return new FloatSample(pick.length, cols, out);
  }

  /** This sample's rows followed by {@code other}'s. */
  public FloatSample concat(FloatSample other) {
    double[] out = java.util.Arrays.copyOf(values, values.length + other.values.length);
    System.arraycopy(other.values, 0, out, values.length, other.values.length);
    return new FloatSample(rows + other.rows, cols, out);
  }
}
