package io.actindex.query.stats;

import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hamming;

/**
 * The Wasserstein-2 distance between two samples of codes with the Hamming distance {@code d} as
 * ground metric: {@code W2(A, B) = sqrt(min over couplings pi of sum_ij pi_ij d(a_i, b_j)^2)}, the
 * couplings having uniform marginals {@code 1/m} and {@code 1/n}. For {@code m = n} an optimal
 * coupling is a permutation (Birkhoff-von Neumann), so {@code W2^2 = min over matchings of the
 * mean of d^2}: solved exactly by {@link Assignment}. Otherwise, or when exact is too slow,
 * {@link Sinkhorn} gives the transport cost of the entropic plan.
 */
public final class Wasserstein {
  private Wasserstein() {}

  public enum Method { EXACT, SINKHORN }

  /**
   * {@code w2} in bits; for Sinkhorn also the regularisation (absolute, in bits^2, and relative to
   * the mean squared distance), the iterations, the L1 marginal error and whether it converged.
   */
  public record Result(Method method, double w2, int rowsA, int rowsB, double epsilon, double relativeEpsilon, int iterations,
      double marginalError, boolean converged) {}

  public static Result exact(CodeBlock a, CodeBlock b, int threads) {
    int n = a.size();
    if (b.size() != n) throw new BadParameterException("b", " has " + b.size() + " rows; exact W2 needs as many as sample A (" + n + ")");
    char[] d = crossDistances(a, b, threads);
    long[] cost = new long[d.length];
    for (int i = 0; i < d.length; i++) cost[i] = (long) d[i] * d[i];
    Assignment.Result r = Assignment.solve(n, cost);
    return new Result(Method.EXACT, Math.sqrt(r.cost() / (double) n), n, n, 0, 0, 0, 0, true);
  }

  /** {@code relativeEpsilon}: the regularisation as a fraction of the mean squared distance over all pairs. */
  public static Result sinkhorn(CodeBlock a, CodeBlock b, double relativeEpsilon, int maxIter, double tol, int threads) {
    return sinkhorn(a, b, relativeEpsilon, maxIter, tol, threads, null);
  }

  /** As above; {@code iterated} (may be null) is told the number of each Sinkhorn iteration done. */
  public static Result sinkhorn(CodeBlock a, CodeBlock b, double relativeEpsilon, int maxIter, double tol, int threads,
      java.util.function.IntConsumer iterated) {
    int m = a.size(), n = b.size();
    char[] d = crossDistances(a, b, threads);
    int bits = a.layout().bits();
    double[] cost = new double[bits + 1];
    for (int k = 0; k <= bits; k++) cost[k] = (double) k * k;
    double mean = 0;
    for (char x : d) mean += cost[x];
    mean /= d.length;
    double eps = relativeEpsilon * Math.max(mean, 1);
    Sinkhorn.Result r = Sinkhorn.solve(m, n, d, cost, eps, maxIter, tol, threads, iterated);
    return new Result(Method.SINKHORN, Math.sqrt(Math.max(0, r.cost())), m, n, eps, relativeEpsilon, r.iterations(),
        r.marginalError(), r.converged());
  }

  /** Row-major m x n Hamming distances between A's and B's codes. */
  static char[] crossDistances(CodeBlock a, CodeBlock b, int threads) {
    int m = a.size(), n = b.size(), w = a.wordsPerCode();
    if ((long) m * n > Integer.MAX_VALUE - 16) throw new BadParameterException("b", " has " + n + " rows: " + m + " x " + n + " pairs are too many for one matrix");
    if (a.layout().bits() > Character.MAX_VALUE) throw new BadParameterException("a", " holds codes of " + a.layout().bits() + " bits; distances are kept in 16 bits (at most 65,535)");
    char[] d = new char[m * n];
    long[] x = a.words(), y = b.words();
    Parallel.forRange(threads, m, (from, to) -> {
      for (int i = from; i < to; i++)
        for (int j = 0; j < n; j++) d[i * n + j] = (char) Hamming.distance(x, i * w, y, j * w, w);
    });
    return d;
  }
}
