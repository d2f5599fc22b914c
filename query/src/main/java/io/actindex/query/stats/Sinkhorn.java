package io.actindex.query.stats;

/**
 * Entropy-regularised optimal transport between two uniform empirical distributions (Cuturi,
 * "Sinkhorn Distances: Lightspeed Computation of Optimal Transport", NeurIPS 2013), with the
 * iterations done on the dual potentials in the log domain so that small regularisations neither
 * underflow nor overflow (the "log-sum-exp" form of Peyre &amp; Cuturi, "Computational Optimal
 * Transport", 2019, sec. 4.4).
 *
 * <p>Costs come as a table indexed by a small integer per pair (here the Hamming distance), so a
 * pair costs one table lookup. Each half-iteration sets one side's potentials so that its
 * marginal is exact; iterations stop when the other side's marginals are within {@code tol}
 * (L1) or after {@code maxIter}. The reported cost is {@code <P, C>} of the regularised plan
 * {@code P} (without the entropy term), which tends to the exact transport cost as the
 * regularisation goes to 0 (Cominetti &amp; San Martin, Math. Programming 67, 1994).
 */
public final class Sinkhorn {
  private Sinkhorn() {}

  /** {@code cost = <P, C>}, the regularisation used, iterations run and the final L1 marginal error. */
  public record Result(double cost, double epsilon, int iterations, double marginalError, boolean converged) {}

  /** Terms below e^-40 of the largest one in a log-sum-exp are dropped (relative error under n * 4e-18). */
  private static final double CUT = -40;

  /**
   * @param m rows (sample A, mass 1/m each)
   * @param n columns (sample B, mass 1/n each)
   * @param index row-major m x n, the cost class of each pair (e.g. its Hamming distance)
   * @param cost the cost of each class (e.g. distance squared)
   * @param epsilon the regularisation, in cost units
   */
  public static Result solve(int m, int n, char[] index, double[] cost, double epsilon, int maxIter, double tol, int threads) {
    if (!(epsilon > 0)) throw new IllegalArgumentException("epsilon must be positive");
    double[] f = new double[m], g = new double[n];
    double logA = Math.log(1.0 / m), logB = Math.log(1.0 / n);
    double[] scaled = new double[cost.length]; // C / eps
    for (int c = 0; c < cost.length; c++) scaled[c] = cost[c] / epsilon;
    double[] fe = new double[m], ge = new double[n]; // potentials / eps
    int it = 0;
    double err = Double.POSITIVE_INFINITY;
    while (it < maxIter) {
      it++;
      // rows: f_i = eps log a_i - eps LSE_j (g_j - C_ij) / eps
      Parallel.forRange(threads, m, (from, to) -> {
        for (int i = from; i < to; i++) {
          double mx = Double.NEGATIVE_INFINITY, s = 0;
          int base = i * n;
          for (int j = 0; j < n; j++) {
            double x = ge[j] - scaled[index[base + j]];
            if (x > mx) {
              s = s * Math.exp(mx - x) + 1;
              mx = x;
            } else if (x - mx > CUT) {
              s += Math.exp(x - mx);
            }
          }
          fe[i] = logA - (mx + Math.log(s));
        }
      });
      // columns: the same with the roles swapped; the columns' marginal before the update is the error
      double[] colMax = new double[n], colSum = new double[n];
      columnLse(m, n, index, scaled, fe, colMax, colSum, threads);
      double e = 0;
      for (int j = 0; j < n; j++) {
        double lse = colMax[j] + Math.log(colSum[j]);
        e += Math.abs(Math.exp(ge[j] + lse) - 1.0 / n);
        ge[j] = logB - lse;
      }
      err = e;
      if (err < tol) break;
    }
    for (int i = 0; i < m; i++) f[i] = fe[i];
    for (int j = 0; j < n; j++) g[j] = ge[j];
    double[] partial = new double[m];
    Parallel.forRange(threads, m, (from, to) -> {
      for (int i = from; i < to; i++) {
        double s = 0;
        int base = i * n;
        for (int j = 0; j < n; j++) {
          int c = index[base + j];
          double x = f[i] + g[j] - scaled[c];
          if (x > CUT - 40) s += Math.exp(x) * cost[c];
        }
        partial[i] = s;
      }
    });
    double total = 0;
    for (double p : partial) total += p;
    return new Result(total, epsilon, it, err, err < tol);
  }

  /** Per column: a running (max, sum of exp(x - max)) over the rows, merged across chunks. */
  private static void columnLse(int m, int n, char[] index, double[] scaled, double[] fe, double[] colMax, double[] colSum,
      int threads) {
    java.util.Arrays.fill(colMax, Double.NEGATIVE_INFINITY);
    Object lock = new Object();
    Parallel.forRange(threads, m, (from, to) -> {
      double[] mx = new double[n], s = new double[n];
      java.util.Arrays.fill(mx, Double.NEGATIVE_INFINITY);
      for (int i = from; i < to; i++) {
        int base = i * n;
        double fi = fe[i];
        for (int j = 0; j < n; j++) {
          double x = fi - scaled[index[base + j]];
          double mj = mx[j];
          if (x > mj) {
            s[j] = s[j] * Math.exp(mj - x) + 1;
            mx[j] = x;
          } else if (x - mj > CUT) {
            s[j] += Math.exp(x - mj);
          }
        }
      }
      synchronized (lock) {
        for (int j = 0; j < n; j++) {
          if (s[j] == 0) continue;
          double a = colMax[j], b = mx[j], top = Math.max(a, b);
          colSum[j] = (a == Double.NEGATIVE_INFINITY ? 0 : colSum[j] * Math.exp(a - top)) + s[j] * Math.exp(b - top);
          colMax[j] = top;
        }
      }
    });
  }
}
