package io.actindex.query.stats;

import java.util.SplittableRandom;

/**
 * The relabelings of a permutation test and its p-value rule.
 *
 * <p>A labeling of a pooled sample of {@code n} rows is a permutation {@code order} of {@code
 * 0..n-1}: rows {@code order[0..m)} play sample A, the rest sample B. {@link #seeded} gives the
 * {@code p}-th labeling as a function of the seed and {@code p} only, so results do not depend on
 * the thread count; tests can pass a fixed list instead.
 */
@FunctionalInterface
public interface Permutations {

  /** Fills {@code order} (length n) with the {@code p}-th labeling. */
  void fill(int p, int[] order);

  /** Uniform random permutations (Fisher-Yates shuffle), the {@code p}-th from its own stream. */
  static Permutations seeded(long seed) {
    return (p, order) -> {
      SplittableRandom r = new SplittableRandom(seed ^ (0x9E3779B97F4A7C15L * (p + 1L)));
      for (int i = 0; i < order.length; i++) order[i] = i;
      for (int i = order.length - 1; i > 0; i--) {
        int j = r.nextInt(i + 1);
        int t = order[i];
        order[i] = order[j];
        order[j] = t;
      }
    };
  }

  /**
   * The permutation p-value {@code (1 + #{null >= observed}) / (1 + P)} (Phipson &amp; Smyth,
   * "Permutation p-values should never be zero", Stat. Appl. Genet. Mol. Biol. 2010). A null
   * value counts as "at least the observed" when it is within {@code 1e-12} (relative to the
   * larger magnitude, at least 1e-12 absolute) below it, so a relabeling that reproduces the
   * observed split with another summation order counts.
   */
  static double pValue(double observed, double[] nulls) {
    int atLeast = 0;
    for (double t : nulls) if (t >= observed - 1e-12 * Math.max(1, Math.max(Math.abs(t), Math.abs(observed)))) atLeast++;
    return (1.0 + atLeast) / (1.0 + nulls.length);
  }
}
