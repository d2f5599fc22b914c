package io.actindex.cli.format;

import java.io.PrintWriter;
import java.util.List;

/**
 * Writes CSV as RFC 4180 describes it: comma-separated fields, CRLF-free output lines ending in
 * {@code \n} (common practice on Unix), a field quoted with double quotes when it contains a
 * comma, a quote, a line break or leading/trailing space, and quotes inside doubled.
 * A null field is written empty.
 */
public final class CsvWriter {
  private final PrintWriter out;
  private final int columns;

  /** Starts a CSV document with its header line. */
  public CsvWriter(PrintWriter out, List<String> header) {
    this.out = out;
    this.columns = header.size();
    row(header);
  }

  public void row(List<String> fields) {
    if (fields.size() != columns)
      throw new IllegalArgumentException("CSV row has " + fields.size() + " fields, the header " + columns);
    StringBuilder sb = new StringBuilder();
    for (int i = 0; i < fields.size(); i++) {
      if (i > 0) sb.append(',');
      sb.append(field(fields.get(i)));
    }
    out.println(sb);
  }

  /** One field, quoted if needed. */
  public static String field(String s) {
    if (s == null) return "";
    boolean quote = s.indexOf(',') >= 0 || s.indexOf('"') >= 0 || s.indexOf('\n') >= 0 || s.indexOf('\r') >= 0
        || (!s.isEmpty() && (Character.isWhitespace(s.charAt(0)) || Character.isWhitespace(s.charAt(s.length() - 1))));
    return quote ? '"' + s.replace("\"", "\"\"") + '"' : s;
  }
}
