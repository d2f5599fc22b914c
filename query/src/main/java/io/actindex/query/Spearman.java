package io.actindex.query;

import java.util.Arrays;

/**
 * Spearman's rank correlation coefficient: Pearson's correlation of the ranks, with tied values
 * given the average of the ranks they span (the usual treatment of ties; it equals the
 * tie-corrected formula of Kendall &amp; Gibbons, Rank Correlation Methods, 1990, ch. 3).
 */
public final class Spearman {
  private Spearman() {}

  /** The coefficient of paired samples {@code x}, {@code y}; NaN when either is constant or fewer than 2 pairs. */
  public static double rho(double[] x, double[] y) {
    if (x.length != y.length) throw new IllegalArgumentException(x.length + " x values, " + y.length + " y values");
    if (x.length < 2) return Double.NaN;
    return pearson(ranks(x), ranks(y));
  }

  /** Ranks 1..n, ties sharing the average of their ranks. */
  public static double[] ranks(double[] v) {
    int n = v.length;
    Integer[] order = new Integer[n];
    for (int i = 0; i < n; i++) order[i] = i;
    Arrays.sort(order, (a, b) -> Double.compare(v[a], v[b]));
    double[] r = new double[n];
    for (int i = 0; i < n; ) {
      int j = i;
      while (j + 1 < n && Double.compare(v[order[j + 1]], v[order[i]]) == 0) j++;
      double avg = (i + j) / 2.0 + 1;
      for (int t = i; t <= j; t++) r[order[t]] = avg;
      i = j + 1;
    }
    return r;
  }

  private static double pearson(double[] a, double[] b) {
    int n = a.length;
    double ma = 0, mb = 0;
    for (int i = 0; i < n; i++) {
      ma += a[i];
      mb += b[i];
    }
    ma /= n;
    mb /= n;
    double sab = 0, saa = 0, sbb = 0;
    for (int i = 0; i < n; i++) {
      double da = a[i] - ma, db = b[i] - mb;
      sab += da * db;
      saa += da * da;
      sbb += db * db;
    }
    if (saa == 0 || sbb == 0) return Double.NaN;
    return sab / Math.sqrt(saa * sbb);
  }
}
