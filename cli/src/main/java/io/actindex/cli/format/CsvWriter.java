package io.actindex.cli.format;

import java.io.PrintWriter;
import java.util.ArrayList;
import java.util.Collection;
import java.util.List;
import java.util.Map;

/**
 * Writes CSV as RFC 4180 describes it: comma-separated fields, CRLF-free output lines ending in
 * {@code \n} (common practice on Unix), a field quoted with double quotes when it contains a
 * comma, a quote, a line break or leading/trailing space, and quotes inside doubled.
 * A null field is written empty.
 *
 * <p>A list in one cell (keys, labels, flipped neurons, layers) is written by {@link #list}: its
 * items separated by {@value #LIST_SEPARATOR}, the same in every command, so that the cell never
 * needs quoting for the separator and splits with one call; an empty list is an empty cell.
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

  /** A number cell: the same text as in JSON ({@link JsonWriter#number}); NaN and infinities (null in JSON) an empty cell. */
  public static String number(double v) {
    return Double.isFinite(v) ? JsonWriter.number(v) : "";
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

  /** The separator of the items of a list written into one cell. */
  public static final String LIST_SEPARATOR = ";";

  /** A list as one cell: the items separated by {@value #LIST_SEPARATOR}. */
  public static String list(Collection<String> items) {
    return String.join(LIST_SEPARATOR, items);
  }

  /** Counts as {@code NAME:COUNT} items, in the map's order (for {@link #list} or a table). */
  public static List<String> counted(Map<String, Integer> counts) {
    List<String> items = new ArrayList<>(counts.size());
    counts.forEach((name, n) -> items.add(name + ":" + n));
    return items;
  }

  /** One field, quoted if needed ({@link io.actindex.core.CsvCell#field}). */
  public static String field(String s) {
    return io.actindex.core.CsvCell.field(s);
  }
}
