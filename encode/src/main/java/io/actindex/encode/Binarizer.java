package io.actindex.encode;

/**
 * Sets the bits of one layer's segment from a row-major chunk of activations: bit {@code start+c}
 * of row {@code r} is {@code v[r][c] > t[c]}. The float path is exact: for a float {@code v} and a
 * double {@code t}, {@code v > t} iff {@code v > fl(t)} where {@code fl(t)} is the largest float
 * not above {@code t}. Stateless apart from its thresholds; thread-safe.
 */
final class Binarizer {
  private final int start;
  private final int cols;
  private final double[] t;
  private final float[] tf;
  private final boolean uniform;

  /** {@code thresholds} has one value per column, or a single value for all. */
  Binarizer(int start, int cols, double[] thresholds) {
    this.start = start;
    this.cols = cols;
    this.uniform = thresholds.length == 1;
    if (!uniform && thresholds.length != cols) throw new IllegalArgumentException(thresholds.length + " thresholds for " + cols + " columns");
    this.t = thresholds.clone();
    this.tf = new float[t.length];
    for (int i = 0; i < t.length; i++) tf[i] = floorFloat(t[i]);
  }

  static float floorFloat(double t) {
    float f = (float) t;
    return f > t ? Math.nextDown(f) : f;
  }

  /** Rows {@code [0, m)} of {@code v} into codes {@code out} ({@code words} longs per code, zeroed). */
  void apply(float[] v, int m, long[] out, int words) {
    for (int r = 0; r < m; r++) {
      int base = r * cols, rowOff = r * words;
      int c = 0;
      while (c < cols) {
        int bit = start + c, sh = bit & 63, take = Math.min(64 - sh, cols - c);
        long acc = 0;
        if (uniform) {
          float th = tf[0];
          for (int j = 0; j < take; j++) acc |= (v[base + c + j] > th ? 1L : 0L) << j;
        } else {
          for (int j = 0; j < take; j++) acc |= (v[base + c + j] > tf[c + j] ? 1L : 0L) << j;
        }
        out[rowOff + (bit >>> 6)] |= acc << sh;
        c += take;
      }
    }
  }

  /** As {@link #apply(float[], int, long[], int)} for doubles. */
  void apply(double[] v, int m, long[] out, int words) {
    for (int r = 0; r < m; r++) {
      int base = r * cols, rowOff = r * words;
      int c = 0;
      while (c < cols) {
        int bit = start + c, sh = bit & 63, take = Math.min(64 - sh, cols - c);
        long acc = 0;
        if (uniform) {
          double th = t[0];
          for (int j = 0; j < take; j++) acc |= (v[base + c + j] > th ? 1L : 0L) << j;
        } else {
          for (int j = 0; j < take; j++) acc |= (v[base + c + j] > t[c + j] ? 1L : 0L) << j;
        }
        out[rowOff + (bit >>> 6)] |= acc << sh;
        c += take;
      }
    }
  }
}
