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

  /** A fraction as a percentage with no decimals, e.g. 0.8 -> "80%". */
  static String percent(double f) {
    return String.format(Locale.ROOT, "%.0f%%", 100 * f);
  }

  /** A rate with three decimals. */
  static String rate(double f) {
    return String.format(Locale.ROOT, "%.3f", f);
  }
}
