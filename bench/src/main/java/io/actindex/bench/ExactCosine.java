package io.actindex.bench;

import org.ejml.data.FMatrixRMaj;
import org.ejml.dense.row.CommonOps_FDRM;

/**
 * Exact cosine k-nearest-neighbour search over float vectors: the full-precision baseline.
 * Rows are normalized once ({@link #normalizeRows}); a query is normalized per search; the k
 * largest dot products win, ties by ascending row. A zero row or query has cosine 0 with
 * everything (common practice; cosine is undefined there).
 *
 * <p>Two ways to get the n dot products: {@link #knnLoops} (a plain loop per row) and
 * {@link Ejml} (one EJML matrix-vector product). Both are exact and give the same rows.
 */
public final class ExactCosine {
  private ExactCosine() {}

  /** Scales every row of the row-major {@code n x d} matrix to unit length, in place. */
  public static void normalizeRows(float[] rows, int d) {
    for (int off = 0; off + d <= rows.length; off += d) normalize(rows, off, d);
  }

  /** A unit-length copy of {@code v} (zeros stay zeros). */
  public static float[] unit(float[] v) {
    float[] u = v.clone();
    normalize(u, 0, u.length);
    return u;
  }

  private static void normalize(float[] a, int off, int d) {
    double s = 0;
    for (int j = 0; j < d; j++) s += (double) a[off + j] * a[off + j];
    if (s == 0) return;
    float inv = (float) (1 / Math.sqrt(s));
    for (int j = 0; j < d; j++) a[off + j] *= inv;
  }

  /** The k rows of {@code unitRows} (n x d, normalized) most cosine-similar to {@code query}. */
  public static int[] knnLoops(float[] unitRows, int d, float[] query, int k, float[] scratch) {
    float[] q = unit(query);
    int n = unitRows.length / d;
    for (int i = 0, off = 0; i < n; i++, off += d) {
      float s0 = 0, s1 = 0, s2 = 0, s3 = 0;
      int j = 0;
      for (; j + 3 < d; j += 4) {
        s0 += unitRows[off + j] * q[j];
        s1 += unitRows[off + j + 1] * q[j + 1];
        s2 += unitRows[off + j + 2] * q[j + 2];
        s3 += unitRows[off + j + 3] * q[j + 3];
      }
      for (; j < d; j++) s0 += unitRows[off + j] * q[j];
      scratch[i] = (s0 + s1) + (s2 + s3);
    }
    return topK(scratch, n, k);
  }

  /** The EJML way: the normalized rows as one matrix, the scores as one matrix-vector product. */
  public static final class Ejml {
    private final FMatrixRMaj rows;
    private final FMatrixRMaj q, scores;

    /** Wraps (does not copy) {@code unitRows}, n x d, already normalized. */
    public Ejml(float[] unitRows, int d) {
      int n = unitRows.length / d;
      rows = FMatrixRMaj.wrap(n, d, unitRows);
      q = new FMatrixRMaj(d, 1);
      scores = new FMatrixRMaj(n, 1);
    }

    /** Not thread-safe (reuses its query and score vectors); use one per thread. */
    public int[] knn(float[] query, int k) {
      System.arraycopy(unit(query), 0, q.data, 0, q.numRows);
      CommonOps_FDRM.mult(rows, q, scores);
      return topK(scores.data, rows.numRows, k);
    }

    /** A searcher over the same rows with its own query and score vectors. */
    public Ejml copy() {
      return new Ejml(rows.data, rows.numCols);
    }
  }

  /**
   * Indices of the {@code k} largest of {@code scores[0..n)}, best first, ties by ascending index.
   * A min-heap of size k on (score, -index).
   */
  public static int[] topK(float[] scores, int n, int k) {
    k = Math.min(k, n);
    if (k <= 0) return new int[0];
    int[] heap = new int[k];
    int size = 0;
    for (int i = 0; i < n; i++) {
      if (size < k) {
        int c = size++;
        while (c > 0) {
          int p = (c - 1) >>> 1;
          if (!worse(scores, i, heap[p])) break;
          heap[c] = heap[p];
          c = p;
        }
        heap[c] = i;
      } else if (worse(scores, heap[0], i)) {
        int c = 0;
        while (true) {
          int l = 2 * c + 1;
          if (l >= k) break;
          int r = l + 1;
          int m = r < k && worse(scores, heap[r], heap[l]) ? r : l;
          if (!worse(scores, heap[m], i)) break;
          heap[c] = heap[m];
          c = m;
        }
        heap[c] = i;
      }
    }
    int[] out = new int[k];
    for (int t = k - 1; t >= 0; t--) {
      out[t] = heap[0];
      int last = heap[t];
      int c = 0;
      while (true) {
        int l = 2 * c + 1;
        if (l >= t) break;
        int r = l + 1;
        int m = r < t && worse(scores, heap[r], heap[l]) ? r : l;
        if (!worse(scores, heap[m], last)) break;
        heap[c] = heap[m];
        c = m;
      }
      heap[c] = last;
    }
    return out;
  }

  /** True if row a ranks below row b: lower score, or equal score and larger index. */
  private static boolean worse(float[] s, int a, int b) {
    return s[a] < s[b] || (s[a] == s[b] && a > b);
  }
}
