package io.actindex.query.stats;

import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hamming;
import java.util.function.DoubleUnaryOperator;

/**
 * The linear-time MMD^2 estimator and its Gaussian test (Gretton, Borgwardt, Rasch, Schoelkopf
 * &amp; Smola, "A Kernel Two-Sample Test", JMLR 13, 2012, Lemma 14 and Corollary 16): rows of A and
 * of B are shuffled (seeded, so a file sorted by class does not bias the pairing) and paired,
 * {@code h_i = k(x_{2i-1}, x_{2i}) + k(y_{2i-1}, y_{2i}) - k(x_{2i-1}, y_{2i}) - k(x_{2i}, y_{2i-1})}
 * for {@code i = 1..floor(min(m, n) / 2)}; the estimate is the mean of {@code h} and, under the
 * null, {@code z = mean / sqrt(var(h) / pairs)} is asymptotically standard normal (one-sided test).
 * The p-value is the upper tail of Student's t with {@code pairs - 1} degrees of freedom at z, as
 * in a one-sample t test of the i.i.d. {@code h_i} (common practice): var(h) is estimated from
 * the same h, and with few pairs the normal tail is far too small (10 rows of one code against 10
 * random rows: 5 pairs, z = 13.0, normal tail 6e-39, t tail 1.0e-4); the t
 * tail tends to the normal one as pairs grow (a relative difference near {@code (z^4 + z^2) / (4
 * pairs)} in the tail, from memory).
 * It reads every row once: for samples too large for a distance matrix.
 *
 * <p>When every pair gives the same {@code h} (both samples constant, say) the variance is 0 and
 * z is undefined: z is NaN and the p-value is the exact sign-flip one. Swapping
 * {@code x_{2i}} and {@code y_{2i}} negates {@code h_i}, so under the null each {@code h_i} is
 * symmetric about 0 (from memory, by that swap); of the {@code 2^pairs} sign patterns of a constant
 * {@code h}, those whose mean is at least the observed one are all of them when {@code h <= 0}
 * (p = 1: identical samples give 1, as the permutation tests do) and only the all-plus one when
 * {@code h > 0} (p = {@code 2^-pairs}, held at the smallest positive double past 1,074 pairs: never 0).
 */
public final class LinearMmd {
  private LinearMmd() {}

  /** Estimate, z score (NaN when every pair gives the same h), p-value, and the number of pairs used. */
  public record Result(double mmd2, double z, double pValue, int pairs) {}

  public static Result of(CodeBlock a, CodeBlock b, DoubleUnaryOperator kernelOfDistance, long seed) {
    int pairs = Math.min(a.size(), b.size()) / 2;
    if (pairs < 2) throw new BadParameterException(a.size() < 4 ? "a" : "b", " has " + Math.min(a.size(), b.size())
        + " rows; the linear-time estimator needs at least 4 in each sample");
    int[] pa = shuffled(a.size(), seed), pb = shuffled(b.size(), seed + 1);
    int w = a.wordsPerCode();
    long[] x = a.words(), y = b.words();
    double[] table = new double[a.layout().bits() + 1];
    for (int d = 0; d < table.length; d++) table[d] = kernelOfDistance.applyAsDouble(d);
    double sum = 0, sq = 0, first = 0;
    boolean constant = true;
    for (int i = 0; i < pairs; i++) {
      int x1 = pa[2 * i] * w, x2 = pa[2 * i + 1] * w, y1 = pb[2 * i] * w, y2 = pb[2 * i + 1] * w;
      double h = table[Hamming.distance(x, x1, x, x2, w)] + table[Hamming.distance(y, y1, y, y2, w)]
          - table[Hamming.distance(x, x1, y, y2, w)] - table[Hamming.distance(x, x2, y, y1, w)];
      if (i == 0) first = h;
      else constant &= h == first;
      sum += h;
      sq += h * h;
    }
    // equal h come from the same table entries in the same order, so they are equal exactly; the
    // one-pass variance of such h is rounding noise (1e-17 gave z = 1.9e8), so it is not used
    double mean = constant ? first : sum / pairs;
    double var = constant ? 0 : Math.max(0, (sq - pairs * mean * mean) / (pairs - 1));
    if (var == 0) return new Result(mean, Double.NaN, mean > 0 ? Math.max(Math.pow(2, -pairs), Double.MIN_VALUE) : 1, pairs);
    double z = mean / Math.sqrt(var / pairs);
    return new Result(mean, z, StudentT.upperTail(z, pairs - 1), pairs);
  }

  private static int[] shuffled(int n, long seed) {
    int[] order = new int[n];
    Permutations.seeded(seed).fill(0, order);
    return order;
  }
}
