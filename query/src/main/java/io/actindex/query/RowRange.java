package io.actindex.query;

import io.actindex.core.BadInputException;

/**
 * Rows {@code [from, to)} of a query file, 0-based, end exclusive; {@code to = -1} means "to the
 * end". Written {@code A:B}, {@code A:} or {@code :B} (like a Python slice), or a single row {@code A}.
 */
public record RowRange(long from, long to) {
  public static final RowRange ALL = new RowRange(0, -1);

  public RowRange {
    if (from < 0) throw new BadInputException("rows: start " + from + " is negative");
    if (to != -1 && to < from) throw new BadInputException("rows: end " + to + " is before start " + from);
  }

  public boolean contains(long row) {
    return row >= from && (to == -1 || row < to);
  }

  /** Parses {@code A:B}, {@code A:}, {@code :B} or {@code A}; null or blank = all rows. */
  public static RowRange parse(String spec) {
    if (spec == null || spec.isBlank()) return ALL;
    String s = spec.trim();
    int colon = s.indexOf(':');
    try {
      if (colon < 0) {
        long a = Long.parseLong(s);
        return new RowRange(a, a + 1);
      }
      String a = s.substring(0, colon).trim(), b = s.substring(colon + 1).trim();
      return new RowRange(a.isEmpty() ? 0 : Long.parseLong(a), b.isEmpty() ? -1 : Long.parseLong(b));
    } catch (NumberFormatException e) {
      throw new BadInputException("rows: '" + spec + "' is not A:B (0-based, end exclusive)");
    }
  }

  @Override
  public String toString() {
    return from + ":" + (to == -1 ? "" : Long.toString(to));
  }
}
