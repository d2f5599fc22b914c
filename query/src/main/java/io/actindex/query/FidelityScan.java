package io.actindex.query;

import io.actindex.core.Hamming;

/**
 * One pass over every row for a block of up to {@link #BLOCK} queries: each query's Hamming distance
 * to every row, and its k nearest rows by cosine distance on the floats (by (distance, row), the
 * query itself left out). Each row's floats are read once for the whole block, and the block's
 * dot products run side by side; each is still summed in double, term by term in column order, as
 * a pair-by-pair loop sums it, so every distance is the same to the last bit.
 */
final class FidelityScan {
  /** Queries per pass over the rows. */
  static final int BLOCK = 8;

  /** {@code hamming[b][j]}: query b's distance to row j ({@link Integer#MAX_VALUE} at the query's own row). */
  final int[][] hamming;

  /** {@code cosineTop[b]}: query b's k nearest rows by cosine distance, nearest first. */
  final int[][] cosineTop;

  private FidelityScan(int[][] hamming, int[][] cosineTop) {
    this.hamming = hamming;
    this.cosineTop = cosineTop;
  }

  /**
   * The queries {@code rows[from..to)} ({@code to - from <= BLOCK}) over the {@code n} codes
   * ({@code w} words each) and floats ({@code d} per row, {@code norms} their Euclidean norms).
   */
  static FidelityScan of(int[] rows, int from, int to, long[] words, int w, float[] floats, int d, double[] norms, int n, int k) {
    int size = to - from;
    int[] q = new int[BLOCK];
    for (int b = 0; b < BLOCK; b++) q[b] = rows[from + Math.min(b, size - 1)]; // a short block repeats its last query
    double[] qf = new double[BLOCK * d]; // column c of query b at c * BLOCK + b
    for (int b = 0; b < BLOCK; b++) for (int c = 0; c < d; c++) qf[c * BLOCK + b] = floats[q[b] * d + c];
    int[][] ham = new int[size][n];
    TopK[] tops = new TopK[size];
    for (int b = 0; b < size; b++) tops[b] = new TopK(k);
    double[] dot = new double[BLOCK];
    for (int j = 0; j < n; j++) {
      for (int b = 0; b < size; b++) ham[b][j] = Hamming.distance(words, q[b] * w, words, j * w, w);
      dots(qf, floats, j * d, d, dot);
      for (int b = 0; b < size; b++) {
        if (j == q[b]) continue;
        double cos = norms[q[b]] == 0 || norms[j] == 0 ? 1 : 1 - dot[b] / (norms[q[b]] * norms[j]);
        tops[b].offer(cos, j);
      }
    }
    int[][] cosineTop = new int[size][];
    for (int b = 0; b < size; b++) {
      ham[b][q[b]] = Integer.MAX_VALUE;
      cosineTop[b] = tops[b].rows();
    }
    return new FidelityScan(ham, cosineTop);
  }

  /**
   * {@code out[b]} = the dot product of query b with the row at {@code at}, summed in column order.
   * The product of two floats is exact in a double, so each fused multiply-add rounds once, as the
   * addition after a plain multiplication would.
   */
  private static void dots(double[] qf, float[] floats, int at, int d, double[] out) {
    double s0 = 0, s1 = 0, s2 = 0, s3 = 0, s4 = 0, s5 = 0, s6 = 0, s7 = 0;
    for (int c = 0, o = 0; c < d; c++, o += BLOCK) {
      double x = floats[at + c];
      s0 = Math.fma(qf[o], x, s0);
      s1 = Math.fma(qf[o + 1], x, s1);
      s2 = Math.fma(qf[o + 2], x, s2);
      s3 = Math.fma(qf[o + 3], x, s3);
      s4 = Math.fma(qf[o + 4], x, s4);
      s5 = Math.fma(qf[o + 5], x, s5);
      s6 = Math.fma(qf[o + 6], x, s6);
      s7 = Math.fma(qf[o + 7], x, s7);
    }
    out[0] = s0;
    out[1] = s1;
    out[2] = s2;
    out[3] = s3;
    out[4] = s4;
    out[5] = s5;
    out[6] = s6;
    out[7] = s7;
  }

  /** The k smallest (value, row) offered, rows offered in ascending order; ties keep the earlier row. */
  private static final class TopK {
    private final double[] value;
    private final int[] row;
    private int size;

    TopK(int k) {
      value = new double[k];
      row = new int[k];
    }

    void offer(double v, int r) {
      int k = value.length;
      if (size == k && !before(v, r, value[k - 1], row[k - 1])) return;
      int at = size < k ? size++ : k - 1;
      while (at > 0 && before(v, r, value[at - 1], row[at - 1])) {
        value[at] = value[at - 1];
        row[at] = row[at - 1];
        at--;
      }
      value[at] = v;
      row[at] = r;
    }

    /** {@code Fidelity.top}'s order: by value ({@link Double#compare} where they differ), then row. */
    private static boolean before(double v, int r, double v2, int r2) {
      return v != v2 ? Double.compare(v, v2) < 0 : r < r2;
    }

    int[] rows() {
      return java.util.Arrays.copyOf(row, size);
    }
  }
}
