package io.actindex.query;

import io.actindex.core.BadParameterException;

/**
 * Rows {@code [from, to)} of a query file, 0-based, end exclusive; {@code to = -1} means "to the
 * end". Written {@code A:B}, {@code A:} or {@code :B} (like a Python slice), or a single row {@code A}.
 */
public record RowRange(long from, long to) {
  public static final RowRange ALL = new RowRange(0, -1);

  public RowRange {
    if (from < 0) throw new BadParameterException("rows", ": start " + from + " is negative");
    if (to != -1 && to < from) throw new BadParameterException("rows", ": end " + to + " is before start " + from);
  }

  public boolean contains(long row) {
    return row >= from && (to == -1 || row < to);
  }

  /**
   * Parses {@code A:B}, {@code A:}, {@code :B} or {@code A}; null = all rows. A blank spec (an unset
   * shell variable) and a negative end are refused: {@code 0:-1} would otherwise read as "to the
   * end", where a Python slice stops one row before it.
   */
  public static RowRange parse(String spec) {
    if (spec == null) return ALL;
    if (spec.isBlank()) throw new BadParameterException("rows", ": the range is empty; leave it out for every row");
    String s = spec.trim();
    int colon = s.indexOf(':');
    try {
      if (colon < 0) {
        long a = Long.parseLong(s);
        return new RowRange(a, a + 1);
      }
      String a = s.substring(0, colon).trim(), b = s.substring(colon + 1).trim();
      long to = b.isEmpty() ? -1 : Long.parseLong(b);
      if (to < 0 && !b.isEmpty())
        throw new BadParameterException("rows", ": end " + to + " is negative (rows count from 0; leave the end out for the last row)");
      return new RowRange(a.isEmpty() ? 0 : Long.parseLong(a), to);
    } catch (NumberFormatException e) {
      throw new BadParameterException("rows", ": '" + spec + "' is not A:B (0-based, end exclusive)");
    }
  }

  @Override
  public String toString() {
    return from + ":" + (to == -1 ? "" : Long.toString(to));
  }
}
