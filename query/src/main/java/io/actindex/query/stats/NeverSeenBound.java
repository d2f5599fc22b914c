package io.actindex.query.stats;

import io.actindex.core.BadParameterException;

/**
 * How often something may happen that never happened in {@code n} independent examples: the
 * one-sided 95% upper confidence bound of its rate, {@code 1 - 0.05^(1/n)} (the exact binomial
 * bound for 0 events in {@code n}; close to {@code 3/n} once {@code n} is large). The same bound
 * holds for the opposite of something that happened every time. Computed as
 * {@code -expm1(ln(0.05) / n)}, so it keeps its digits at any {@code n}.
 */
public final class NeverSeenBound {
  private NeverSeenBound() {}

  private static final double LN_MISS = Math.log(0.05);

  /** The 95% upper bound of a rate never seen in {@code n} examples; NaN for {@code n <= 0} (no examples, no bound). */
  public static double upper(long n) {
    return n <= 0 ? Double.NaN : -Math.expm1(LN_MISS / n);
  }

  /** The fewest examples whose bound {@link #upper} is at most {@code rate} (0 < rate < 1). */
  public static long examplesFor(double rate) {
    if (!(rate > 0 && rate < 1)) throw new BadParameterException("rate", " must be strictly between 0 and 1, got " + rate);
    long n = Math.max(1, (long) Math.ceil(LN_MISS / Math.log1p(-rate)));
    while (n > 1 && upper(n - 1) <= rate) n--; // the closed form may be one off after rounding
    while (upper(n) > rate) n++;
    return n;
  }
}
