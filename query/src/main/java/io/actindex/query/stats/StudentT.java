package io.actindex.query.stats;

import io.actindex.core.BadParameterException;

/**
 * Upper tail {@code P(T > t)} of Student's t distribution with {@code df} degrees of freedom. For
 * {@code t > 0}, {@code P(|T| > t) = I_x(df/2, 1/2)} with {@code x = df / (df + t^2)}, {@code I} the
 * regularized incomplete beta function, evaluated by its continued fraction with the modified
 * Lentz method, directly when {@code x < (a + 1) / (a + b + 2)} and as {@code 1 - I_{1-x}(b, a)}
 * otherwise (Press, Teukolsky, Vetterling &amp; Flannery, "Numerical Recipes", 3rd ed., 2007,
 * sections 5.2 and 6.4). {@code x}, {@code 1 - x} and their logarithms are each computed from
 * {@code t^2 / df}, and {@code ln B(df/2, 1/2)} for large df from Stirling's series without the
 * large {@code ln Gamma} values that would cancel.
 *
 * <p>Accuracy against 50-digit values (tools/golden/make_tails.py), relative, down to 1e-300:
 * below 1e-13 for df up to 1,000, growing about in proportion to df beyond (1.3e-12 at df = 2 x
 * 10^4, 5.4e-11 at 10^6 for t near 1.75; 7.7e-9 measured at 10^8): with many degrees of freedom
 * and a moderate t, {@code x} is within about {@code t^2 / df} of 1 and the fraction, which sees x
 * only, loses a factor of about {@code df / t^2} to rounding.
 */
public final class StudentT {
  private StudentT() {}

  private static final double HALF_LN_TWO_PI = 0.5 * Math.log(2 * Math.PI);
  private static final double EPSILON = Math.ulp(1.0);
  private static final int MAX_TERMS = 1_000_000;

  /** {@code P(T > t)}; NaN for NaN {@code t}. */
  public static double upperTail(double t, double df) {
    if (!(df > 0)) throw new BadParameterException("df", " (degrees of freedom) must be above 0, got " + df);
    if (Double.isNaN(t)) return Double.NaN;
    if (t == 0) return 0.5;
    if (Double.isInfinite(t)) return t > 0 ? 0 : 1;
    double q = t * t / df, x, y, lnX, lnY;
    if (Double.isInfinite(q)) {
      lnX = Math.log(df) - 2 * Math.log(Math.abs(t));
      x = Math.exp(lnX);
      y = 1;
      lnY = 0;
    } else {
      x = 1 / (1 + q);
      y = q / (1 + q);
      lnX = -Math.log1p(q);
      lnY = q == 0 ? Double.NEGATIVE_INFINITY : -Math.log1p(1 / q);
    }
    double half = 0.5 * regularizedBeta(df / 2, 0.5, x, y, lnX, lnY);
    return t > 0 ? half : 1 - half;
  }

  /** {@code I_x(a, b)}, given {@code y = 1 - x} and both logarithms. */
  static double regularizedBeta(double a, double b, double x, double y, double lnX, double lnY) {
    if (x == 0) return 0;
    if (y == 0) return 1;
    double front = Math.exp(a * lnX + b * lnY - logBeta(a, b));
    if (x < (a + 1) / (a + b + 2)) return front * fraction(a, b, x) / a;
    return 1 - front * fraction(b, a, y) / b;
  }

  /** The continued fraction of {@code I_x(a, b)} without its front factor (modified Lentz). */
  private static double fraction(double a, double b, double x) {
    double tiny = 1e-300;
    double c = 1, d = 1 - (a + b) * x / (a + 1);
    if (Math.abs(d) < tiny) d = tiny;
    d = 1 / d;
    double h = d;
    for (int m = 1; m <= MAX_TERMS; m++) {
      int m2 = 2 * m;
      double even = m * (b - m) * x / ((a + m2 - 1) * (a + m2));
      d = 1 + even * d;
      if (Math.abs(d) < tiny) d = tiny;
      c = 1 + even / c;
      if (Math.abs(c) < tiny) c = tiny;
      d = 1 / d;
      h *= d * c;
      double odd = -(a + m) * (a + b + m) * x / ((a + m2) * (a + m2 + 1));
      d = 1 + odd * d;
      if (Math.abs(d) < tiny) d = tiny;
      c = 1 + odd / c;
      if (Math.abs(c) < tiny) c = tiny;
      d = 1 / d;
      double step = d * c;
      h *= step;
      if (Math.abs(step - 1) <= EPSILON) return h;
    }
    throw new ArithmeticException("incomplete beta continued fraction did not converge: a=" + a + " b=" + b + " x=" + x);
  }

  /**
   * {@code ln B(a, b)}; with a large argument {@code g} and a small one {@code s} (here always 1/2),
   * {@code ln Gamma(g) - ln Gamma(g + s)} comes from Stirling's series as one small difference. Both
   * arguments large would cancel in {@code ln Gamma(s)} instead: not a case the t tail has.
   */
  static double logBeta(double a, double b) {
    double s = Math.min(a, b), g = Math.max(a, b);
    if (g < 10) return logGamma(s) + logGamma(g) - logGamma(s + g);
    return logGamma(s) + s - (g - 0.5) * Math.log1p(s / g) - s * Math.log(g + s) + stirlingRest(g) - stirlingRest(g + s);
  }

  /** {@code ln Gamma(x)} for {@code x > 0}: Stirling's series from 10 up, the recurrence {@code Gamma(x + 1) = x Gamma(x)} below. */
  static double logGamma(double x) {
    double shift = 1;
    while (x < 10) {
      shift *= x;
      x += 1;
    }
    return (x - 0.5) * Math.log(x) - x + HALF_LN_TWO_PI + stirlingRest(x) - Math.log(shift);
  }

  /**
   * {@code ln Gamma(x) - ((x - 1/2) ln x - x + ln(2 pi) / 2)} for {@code x >= 10}: the Stirling series
   * {@code sum B_2k / (2k (2k - 1) x^(2k - 1))} to k = 7 (Bernoulli numbers from memory), whose next
   * term is below 3e-17 there.
   */
  static double stirlingRest(double x) {
    double r = 1 / x, r2 = r * r;
    return r * (1.0 / 12 - r2 * (1.0 / 360 - r2 * (1.0 / 1260 - r2 * (1.0 / 1680 - r2 * (1.0 / 1188
        - r2 * (691.0 / 360360 - r2 * (1.0 / 156)))))));
  }
}
