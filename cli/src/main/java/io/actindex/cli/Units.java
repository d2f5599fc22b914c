package io.actindex.cli;

import java.util.Locale;

/** Human-readable numbers for tables. */
final class Units {
  private Units() {}

  /** Bytes in B, KiB, MiB or GiB with one decimal. */
  static String bytes(long b) {
    if (b < 1024) return b + " B";
    String[] units = {"KiB", "MiB", "GiB", "TiB"};
    double v = b;
    int u = -1;
    while (v >= 1024 && u < units.length - 1) {
      v /= 1024;
      u++;
    }
    return String.format(Locale.ROOT, "%.1f %s", v, units[u]);
  }

  /**
   * A fraction as a percentage with no decimals, e.g. 0.8 -> "80%"; a fraction short of 1 (or above
   * 0) that would round to "100%" (or "0%") takes as many decimals as it needs to read otherwise
   * (0.9969 -> "99.7%", 0.0004 -> "0.04%"), up to 4: a label purity of 99.7% printed as 100% hid
   * regions with conflicting labels.
   */
  static String percent(double f) {
    for (int decimals = 0; ; decimals++) {
      String s = String.format(Locale.ROOT, "%." + decimals + "f", 100 * f);
      boolean roundedUp = f < 1 && Double.parseDouble(s) >= 100, roundedDown = f > 0 && Double.parseDouble(s) <= 0;
      if (decimals == 4 || !(roundedUp || roundedDown)) return s + "%";
    }
  }

  /** A rate with three decimals. */
  static String rate(double f) {
    return String.format(Locale.ROOT, "%.3f", f);
  }
}
