package io.actindex.query.stats;

/** Standard normal tail probabilities. */
public final class Normal {
  private Normal() {}

  /**
   * The complementary error function with fractional error below 1.2e-7 everywhere: the Chebyshev
   * fit {@code erfcc} of Press, Teukolsky, Vetterling &amp; Flannery, "Numerical Recipes in C",
   * 2nd ed., 1992, sec. 6.2.
   */
  public static double erfc(double x) {
    double z = Math.abs(x);
    double t = 1 / (1 + 0.5 * z);
    double ans = t * Math.exp(-z * z - 1.26551223 + t * (1.00002368 + t * (0.37409196 + t * (0.09678418
        + t * (-0.18628806 + t * (0.27886807 + t * (-1.13520398 + t * (1.48851587
        + t * (-0.82215223 + t * 0.17087277)))))))));
    return x >= 0 ? ans : 2 - ans;
  }

  /** {@code P(Z > z)} for a standard normal {@code Z}. */
  public static double upperTail(double z) {
    if (z == Double.POSITIVE_INFINITY) return 0;
    if (z == Double.NEGATIVE_INFINITY) return 1;
    return 0.5 * erfc(z / Math.sqrt(2));
  }

  /** {@code P(|Z| >= |z|)}. */
  public static double twoSided(double z) {
    return Math.min(1, erfc(Math.abs(z) / Math.sqrt(2)));
  }
}
