package io.actindex.query.stats;

import io.actindex.core.BadParameterException;

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
    return solve(m, n, index, cost, epsilon, maxIter, tol, threads, null);
  }

  /** As above; {@code iterated} (may be null) is told the number of each iteration done, 1, 2, ..., for a progress bar. */
  public static Result solve(int m, int n, char[] index, double[] cost, double epsilon, int maxIter, double tol, int threads,
      java.util.function.IntConsumer iterated) {
    if (!(epsilon > 0)) throw new BadParameterException("epsilon", " must be above 0, got " + epsilon);
    char[] transposed = new char[index.length];
    for (int i = 0; i < m; i++) for (int j = 0; j < n; j++) transposed[j * m + i] = index[i * n + j];
    double[] scaled = new double[cost.length]; // C / eps
    for (int c = 0; c < cost.length; c++) scaled[c] = cost[c] / epsilon;
    double[] f = new double[m], g = new double[n]; // potentials / eps
    double[] lseCols = new double[n];
    int it = 0;
    double err = Double.POSITIVE_INFINITY;
    while (it < maxIter) {
      it++;
      // f_i = log a_i - LSE_j (g_j - C_ij / eps): rows' marginals become exact
      logSumExp(m, n, index, scaled, g, null, f, threads);
      for (int i = 0; i < m; i++) f[i] = Math.log(1.0 / m) - f[i];
      // the columns' marginal before their update is the error; then g_j = log b_j - LSE_i (f_i - C_ij / eps)
      logSumExp(n, m, transposed, scaled, f, null, lseCols, threads);
      double e = 0;
      for (int j = 0; j < n; j++) {
        e += Math.abs(Math.exp(g[j] + lseCols[j]) - 1.0 / n);
        g[j] = Math.log(1.0 / n) - lseCols[j];
      }
      err = e;
      if (iterated != null) iterated.accept(it);
      if (err < tol) break;
    }
    // <P, C> = sum_i exp(f_i) sum_j exp(g_j - C_ij / eps) C_ij
    double[] rowCost = new double[m];
    logSumExp(m, n, index, scaled, g, cost, rowCost, threads);
    double total = 0;
    for (int i = 0; i < m; i++) total += Math.exp(f[i] + rowCost[i]);
    return new Result(total, epsilon, it, err, err < tol);
  }

  /**
   * {@code out[i] = log sum_j exp(p[j] - scaled[c]) weight[c]}, {@code c = index[i * cols + j]}, for
   * each of {@code rows} rows ({@code weight} null = 1). With {@code G = max p} and the row's largest term {@code M}, each term is {@code
   * exp(p[j] - G) * exp(G - scaled[c] - M)}: one exponential per column and one per cost class
   * and row, not one per pair. When {@code G - M} is too large for that product to stay in range
   * (a term could overflow; above 680), the row takes one exponential per pair. A column whose
   * {@code exp(p[j] - G)} underflows then contributes under e^-65 of the row's largest term.
   */
  private static void logSumExp(int rows, int cols, char[] index, double[] scaled, double[] p, double[] weight, double[] out,
      int threads) {
    double top = Double.NEGATIVE_INFINITY;
    for (double x : p) top = Math.max(top, x);
    double g = top;
    double[] w = new double[cols];
    for (int j = 0; j < cols; j++) w[j] = Math.exp(p[j] - g);
    Parallel.forRange(threads, rows, (from, to) -> {
      double[] t = new double[scaled.length];
      for (int i = from; i < to; i++) {
        int base = i * cols;
        double mx = Double.NEGATIVE_INFINITY;
        for (int j = 0; j < cols; j++) mx = Math.max(mx, p[j] - scaled[index[base + j]]);
        double s = 0;
        if (g - mx <= 680) { // then t[c] * weight[c] <= e^680 * 2^32 stays finite
          for (int c = 0; c < t.length; c++) t[c] = Math.exp(g - scaled[c] - mx) * (weight == null ? 1 : weight[c]);
          for (int j = 0; j < cols; j++) s += w[j] * t[index[base + j]];
        } else {
          for (int j = 0; j < cols; j++) {
            double x = p[j] - scaled[index[base + j]] - mx;
            if (x > CUT) s += Math.exp(x) * (weight == null ? 1 : weight[index[base + j]]);
          }
        }
        out[i] = mx + Math.log(s);
      }
    });
  }
}
