package io.actindex.query.stats;

import java.util.Arrays;

/**
 * A symmetric kernel matrix over a pooled sample of {@code n} rows (the first {@code m} from A,
 * the rest from B), and the unbiased MMD^2 estimator on it (Gretton, Borgwardt, Rasch, Schoelkopf
 * &amp; Smola, "A Kernel Two-Sample Test", JMLR 13, 2012, eq. (3)):
 *
 * <pre>
 * MMD^2_u = 1/(m(m-1)) sum_{i != j in A} k + 1/(n(n-1)) sum_{i != j in B} k - 2/(mn) sum_{A x B} k
 * </pre>
 *
 * The permutation test relabels rows and reuses the matrix: each relabeling sums the kernel
 * over the pairs inside the smaller group only; the other two sums follow from the row sums.
 */
public final class KernelMatrix {
  private final int n;
  private final double[] k; // the values, or null when they come as classes
  private final char[] classes; // row-major class of each pair (e.g. its Hamming distance) ...
  private final double[] table; // ... and the kernel value of each class
  private final double[] rowSums;
  private final double total;

  /** {@code values}: row-major n x n, symmetric; the diagonal is ignored. */
  public KernelMatrix(int n, double[] values) {
    this(n, values, null, null);
  }

  /**
   * A kernel that takes few distinct values: pair (i, j) has the value {@code table[classes[i * n +
   * j]]}. A quarter of the memory of the values and exact; the permutations read 2 bytes per pair.
   */
  public KernelMatrix(int n, char[] classes, double[] table) {
    this(n, null, classes, table);
  }

  private KernelMatrix(int n, double[] values, char[] classes, double[] table) {
    if ((values != null ? values.length : classes.length) != (long) n * n) throw new IllegalArgumentException("need n*n values");
    this.n = n;
    this.k = values;
    this.classes = classes;
    this.table = table;
    this.rowSums = new double[n];
    double t = 0;
    for (int i = 0; i < n; i++) {
      double s = 0;
      for (int j = 0; j < n; j++) if (j != i) s += at(i, j);
      rowSums[i] = s;
      t += s;
    }
    this.total = t;
  }

  public int size() {
    return n;
  }

  public double at(int i, int j) {
    return k != null ? k[i * n + j] : table[classes[i * n + j]];
  }

  /** The sum of row {@code row} over the columns {@code cols[from..)}. */
  private double rowSum(int row, int[] cols, int from) {
    int base = row * n;
    double s = 0;
    if (k != null) for (int b = from; b < cols.length; b++) s += k[base + cols[b]];
    else for (int b = from; b < cols.length; b++) s += table[classes[base + cols[b]]];
    return s;
  }

  /** MMD^2_u with rows {@code order[0..m)} as A and the rest as B (both groups need 2 rows or more). */
  public double mmd2(int[] order, int m) {
    int nb = n - m;
    boolean aSmall = m <= nb;
    // the sums depend on the set only: sorted, each row is read at ascending addresses
    int[] g = aSmall ? Arrays.copyOfRange(order, 0, m) : Arrays.copyOfRange(order, m, n);
    Arrays.sort(g);
    double within = 0, rows = 0; // within: unordered pairs inside the small group
    for (int a = 0; a < g.length; a++) {
      within += rowSum(g[a], g, a + 1);
      rows += rowSums[g[a]];
    }
    double cross = rows - 2 * within;
    double other = (total - 2 * within - 2 * cross) / 2;
    double wa = aSmall ? within : other, wb = aSmall ? other : within;
    return 2 * wa / ((double) m * (m - 1)) + 2 * wb / ((double) nb * (nb - 1)) - 2 * cross / ((double) m * nb);
  }

  /** The statistic on the given split (A = rows 0..m-1) and its permutation p-value. */
  public PermutationTest test(int m, Permutations perms, int permutations, int threads) {
    int[] identity = new int[n];
    for (int i = 0; i < n; i++) identity[i] = i;
    double observed = mmd2(identity, m);
    double[] nulls = new double[permutations];
    Parallel.forRange(threads, permutations, (from, to) -> {
      int[] order = new int[n];
      for (int p = from; p < to; p++) {
        perms.fill(p, order);
        nulls[p] = mmd2(order, m);
      }
    });
    return PermutationTest.of(observed, nulls);
  }
}
