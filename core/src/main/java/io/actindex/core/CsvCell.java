package io.actindex.core;

/** One CSV cell as the command line's CSV output and the files actindex writes spell it (RFC 4180 quoting). */
public final class CsvCell {
  private CsvCell() {}

  /**
   * {@code s} as one field: quoted (inner quotes doubled) when it holds a comma, a quote or a line
   * break, or starts or ends with whitespace (which readers drop from an unquoted cell); null is empty.
   */
  public static String field(String s) {
    if (s == null) return "";
    boolean quote = s.indexOf(',') >= 0 || s.indexOf('"') >= 0 || s.indexOf('\n') >= 0 || s.indexOf('\r') >= 0
        || (!s.isEmpty() && (Character.isWhitespace(s.charAt(0)) || Character.isWhitespace(s.charAt(s.length() - 1))));
    return quote ? '"' + s.replace("\"", "\"\"") + '"' : s;
  }
}
