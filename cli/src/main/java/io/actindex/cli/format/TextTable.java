package io.actindex.cli.format;

import io.actindex.core.BadInputException;
import java.io.PrintWriter;
import java.util.ArrayList;
import java.util.List;

/**
 * A plain-text table for terminals: a header row, a dashed rule, then rows, columns padded to
 * their widest cell and separated by two spaces. Cells that look numeric are right-aligned.
 * Line breaks and tabs inside cells are shown as spaces so a row stays on one line; other control
 * characters and line or paragraph separators (cells come from users' files: an ESC sequence would
 * drive the terminal) are shown escaped, {@code \u001b}, as {@link BadInputException#snippet} does.
 */
public final class TextTable {
  private final List<String> header;
  private final List<List<String>> rows = new ArrayList<>();

  public TextTable(List<String> header) {
    this.header = header.stream().map(TextTable::clean).toList();
  }

  /** Adds a row; it must have as many cells as the header (null cells print empty). */
  public TextTable row(List<String> cells) {
    if (cells.size() != header.size())
      throw new IllegalArgumentException("row has " + cells.size() + " cells, the header " + header.size());
    List<String> clean = new ArrayList<>(cells.size());
    for (String c : cells) clean.add(clean(c));
    rows.add(clean);
    return this;
  }

  /**
   * A name (label, split, key) as an item of a list in one cell ({@code dog 2, cat 1} or {@code
   * dog:2 cat:1}): in double quotes, inner ones doubled, when it holds whitespace, a comma, a colon
   * or a double quote, so that the list reads one way; other names as they are.
   */
  public static String item(String name) {
    if (name == null) return "";
    boolean quote = false;
    for (int i = 0; i < name.length() && !quote; i++) {
      char c = name.charAt(i);
      quote = Character.isWhitespace(c) || Character.isSpaceChar(c) || c == ',' || c == ':' || c == '"';
    }
    return quote ? '"' + name.replace("\"", "\"\"") + '"' : name;
  }

  private static String clean(String cell) {
    return cell == null ? "" : BadInputException.snippet(cell.replaceAll("[\\t\\r\\n]", " "), Integer.MAX_VALUE);
  }

  public int size() {
    return rows.size();
  }

  /** Prints the table, each line prefixed by {@code indent}. */
  public void print(PrintWriter out, String indent) {
    int cols = header.size();
    int[] width = new int[cols];
    boolean[] numeric = new boolean[cols];
    for (int c = 0; c < cols; c++) {
      width[c] = header.get(c).length();
      numeric[c] = !rows.isEmpty();
      for (List<String> r : rows) {
        width[c] = Math.max(width[c], r.get(c).length());
        if (!r.get(c).isEmpty() && !isNumber(r.get(c))) numeric[c] = false;
      }
    }
    line(out, indent, header, width, numeric);
    StringBuilder rule = new StringBuilder(indent);
    for (int c = 0; c < cols; c++) rule.append(c == 0 ? "" : "  ").append("-".repeat(width[c]));
    out.println(rule);
    for (List<String> r : rows) line(out, indent, r, width, numeric);
  }

  private static void line(PrintWriter out, String indent, List<String> cells, int[] width, boolean[] numeric) {
    StringBuilder sb = new StringBuilder(indent);
    for (int c = 0; c < cells.size(); c++) {
      if (c > 0) sb.append("  ");
      String cell = cells.get(c);
      String pad = " ".repeat(width[c] - cell.length());
      if (numeric[c]) sb.append(pad).append(cell);
      else sb.append(cell).append(c == cells.size() - 1 ? "" : pad);
    }
    out.println(sb.toString().stripTrailing());
  }

  private static boolean isNumber(String s) {
    return s.matches("[-+]?\\d+(\\.\\d+)?%?");
  }
}
