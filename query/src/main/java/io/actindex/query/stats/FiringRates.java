package io.actindex.query.stats;

import io.actindex.core.CodeBlock;
import java.util.Arrays;

/**
 * Per-neuron firing rates of two samples and the two-proportion z test for each neuron
 * ({@code z = (pA - pB) / sqrt(p (1 - p) (1/m + 1/n))}, {@code p} the pooled rate; a neuron
 * constant over both samples gets z = 0), two-sided normal p-values, and q-values by the
 * Benjamini-Hochberg step-up rule ("Controlling the false discovery rate", J. R. Stat. Soc. B 57,
 * 1995): {@code q_(i) = min_{k >= i} min(1, p_(k) L / k)} over the {@code L} neurons sorted by p.
 */
public final class FiringRates {
  private FiringRates() {}

  /** Per bit: rates in A and B, z statistic, two-sided p-value, BH q-value. */
  public record Result(double[] rateA, double[] rateB, double[] z, double[] p, double[] q) {}

  public static Result of(CodeBlock a, CodeBlock b) {
    int bits = a.layout().bits();
    long[] ca = counts(a), cb = counts(b);
    double m = a.size(), n = b.size();
    double[] ra = new double[bits], rb = new double[bits], z = new double[bits], p = new double[bits];
    for (int i = 0; i < bits; i++) {
      ra[i] = ca[i] / m;
      rb[i] = cb[i] / n;
      double pooled = (ca[i] + cb[i]) / (m + n);
      double se = Math.sqrt(pooled * (1 - pooled) * (1 / m + 1 / n));
      z[i] = se == 0 ? 0 : (ra[i] - rb[i]) / se;
      p[i] = Normal.twoSided(z[i]);
    }
    return new Result(ra, rb, z, p, benjaminiHochberg(p));
  }

  /** Benjamini-Hochberg adjusted p-values (q-values), in the input order. */
  public static double[] benjaminiHochberg(double[] p) {
    int len = p.length;
    Integer[] order = new Integer[len];
    for (int i = 0; i < len; i++) order[i] = i;
    Arrays.sort(order, (x, y) -> Double.compare(p[x], p[y]));
    double[] q = new double[len];
    double running = 1;
    for (int r = len - 1; r >= 0; r--) {
      int i = order[r];
      running = Math.min(running, p[i] * len / (r + 1));
      q[i] = Math.min(1, running);
    }
    return q;
  }

  private static long[] counts(CodeBlock c) {
    int w = c.wordsPerCode();
    long[] out = new long[c.layout().bits()], data = c.words();
    for (int i = 0; i < c.size(); i++)
      for (int q = 0; q < w; q++)
        for (long x = data[i * w + q]; x != 0; x &= x - 1) out[(q << 6) + Long.numberOfTrailingZeros(x)]++;
    return out;
  }
}
