package io.actindex.edge;

import java.math.BigDecimal;
import java.util.ArrayList;
import java.util.List;
import java.util.regex.Pattern;

/**
 * How a line of a numeric rows file is split into cells and its cells classified: one copy of the
 * rules shared by the index's CSV reader ({@code CsvMatrixReader}) and this jar's {@code --inputs}
 * ({@link EdgeMain}), so that both read a file alike. Messages naming the file or the line stay with
 * the callers. JDK only and Java 17, as the rest of this module, so any module may use it.
 */
public final class RowText {
  private RowText() {}

  /**
   * Longest line a rows file may hold, in bytes (64 MiB): a reader refuses a longer one rather than
   * read a file without line ends (binary data, one huge line) until memory runs out.
   */
  public static final int MAX_LINE_BYTES = 64 << 20;

  /** A decimal number as a cell of data may write one: no {@code 1f}, {@code 1d} or hexadecimal, which Java's own parser takes. */
  private static final Pattern DECIMAL = Pattern.compile("[+-]?(\\d+\\.?\\d*|\\.\\d+)([eE][+-]?\\d+)?");

  /** A NaN/infinity word, recognised so that it is refused as a value, not taken for text. */
  private static final Pattern NOT_FINITE = Pattern.compile("[+-]?(?i:nan|inf|infinity)");

  /** A row-index column's header cell: empty (pandas), {@code Unnamed: 0}, {@code index}, {@code row}, {@code id}. */
  private static final Pattern INDEX_HEADER = Pattern.compile("|unnamed: ?0|index|row|id", Pattern.CASE_INSENSITIVE);

  private static final Pattern WHOLE = Pattern.compile("[+-]?\\d+"), DIGITS = Pattern.compile("\\d+");

  private static final Pattern OTHER_SEPARATOR = Pattern.compile("[\\s;]+");

  /** Whether {@code s} is a decimal number as a cell of data writes one ({@code 3}, {@code -0.5}, {@code 1e-3}). */
  public static boolean isDecimal(String s) {
    return DECIMAL.matcher(s).matches();
  }

  /** Whether {@code s} is a NaN or infinity word ({@code nan}, {@code -Inf}, {@code infinity}, any case). */
  public static boolean isNotFinite(String s) {
    return NOT_FINITE.matcher(s).matches();
  }

  /** A decimal number or a NaN/infinity word: not text. */
  public static boolean isNumber(String s) {
    return isDecimal(s) || isNotFinite(s);
  }

  /** Whether header cell {@code s} (trimmed) names a row-index column. */
  public static boolean isIndexHeader(String s) {
    return INDEX_HEADER.matcher(s).matches();
  }

  /**
   * Whether trimmed cell {@code cell} of column {@code col} (0 or 1) of a two-cell row is what one
   * value written with a decimal comma splits into: column 0 a whole number, column 1 digits without
   * a sign ({@code 0,342} for 0.342).
   */
  public static boolean isDecimalCommaPart(int col, String cell) {
    return (col == 0 ? WHOLE : DIGITS).matcher(cell).matches();
  }

  /**
   * What separates the numbers of a cell that holds several, apart by spaces, tabs or semicolons:
   * {@code "semicolons"}, {@code "tabs"} or {@code "spaces"}; null when the cell is not such numbers.
   */
  public static String otherSeparator(String cell) {
    String[] parts = OTHER_SEPARATOR.split(cell.trim());
    if (parts.length < 2) return null;
    for (String p : parts) if (!isNumber(p)) return null;
    return cell.indexOf(';') >= 0 ? "semicolons" : cell.indexOf('\t') >= 0 ? "tabs" : "spaces";
  }

  /** A quoted cell that cannot be read: {@link #column()} (0-based) and {@link #reason()}; the message is both. */
  public static final class BadCell extends IllegalArgumentException {
    private final int column;
    private final String reason;

    BadCell(int column, String reason) {
      super("column " + column + ": " + reason);
      this.column = column;
      this.reason = reason;
    }

    public int column() {
      return column;
    }

    public String reason() {
      return reason;
    }
  }

  /**
   * The cells of a line, RFC 4180 quoting undone, each cell on its line: {@code "a,b"} is one cell,
   * {@code ""} inside quotes one quote; spaces around a quoted cell are dropped. A line without a
   * quote is split at every comma, an empty last cell kept. A quote left open, or text after a
   * closing quote, is refused ({@link BadCell}).
   */
  public static String[] cells(String s) {
    if (s.indexOf('"') < 0) return s.split(",", -1);
    List<String> cells = new ArrayList<>();
    StringBuilder cell = new StringBuilder();
    int i = 0, n = s.length();
    while (true) {
      int start = i;
      while (i < n && s.charAt(i) == ' ') i++;
      if (i < n && s.charAt(i) == '"') {
        cell.setLength(0);
        for (i++; ; i++) {
          if (i == n) throw new BadCell(cells.size(), "a quoted cell is not closed on its line");
          char c = s.charAt(i);
          if (c != '"') cell.append(c);
          else if (i + 1 < n && s.charAt(i + 1) == '"') cell.append(s.charAt(++i));
          else break;
        }
        for (i++; i < n && s.charAt(i) == ' '; i++) {}
        if (i < n && s.charAt(i) != ',') throw new BadCell(cells.size(), "text after a closing quote");
        cells.add(cell.toString());
      } else {
        int comma = s.indexOf(',', i);
        i = comma < 0 ? n : comma;
        cells.add(s.substring(start, i));
      }
      if (i == n) return cells.toArray(String[]::new);
      i++; // the comma
    }
  }

  /**
   * Where the first cells of the first rows (column 0, untrimmed; two or more of them) count up by
   * one from 0 or 1, as a row-index column written with the data does: that start, else -1.
   */
  public static long countingFrom(List<String> column0) {
    if (column0.size() < 2) return -1;
    long start = -1;
    for (int k = 0; k < column0.size(); k++) {
      long v;
      try {
        v = Long.parseLong(column0.get(k).trim());
      } catch (NumberFormatException e) {
        return -1;
      }
      if (k == 0) start = v;
      if ((start != 0 && start != 1) || v != start + k) return -1;
    }
    return start;
  }

  /** What the cells of a first line look like, in the order the header decision asks. */
  public enum FirstLine {
    /** Every cell is text (an empty cell counts as text): a header. */
    TEXT,
    /** {@code 0} or {@code 0,1}: the column numbers a data-frame library writes, or a row of 0/1 values; either is likely. */
    FEW_COLUMN_NUMBERS,
    /** {@code 0, 1, ..., d-1}, three or more, optionally after a row-index header cell: a header. */
    COLUMN_NUMBERS,
    /** Three or more numbers evenly spaced: numbered column names or data; either is likely. */
    EVENLY_SPACED,
    /** Every cell a number, none of the above: data. */
    NUMBERS,
    /** Text and numbers mixed. */
    MIXED
  }

  /** The kind of first line {@code f} (its cells, untrimmed) is; the first of the {@link FirstLine} kinds in their order that fits. */
  public static FirstLine firstLine(String[] f) {
    int text = 0;
    for (String c : f) if (!isNumber(c.trim())) text++;
    if (text == f.length) return FirstLine.TEXT;
    if (columnNumbers(f, 0) && f.length < 3) return FirstLine.FEW_COLUMN_NUMBERS;
    if (columnNumbers(f, 0) || (isIndexHeader(f[0].trim()) && columnNumbers(f, 1))) return FirstLine.COLUMN_NUMBERS;
    if (text == 0 && evenlySpaced(f)) return FirstLine.EVENLY_SPACED;
    return text == 0 ? FirstLine.NUMBERS : FirstLine.MIXED;
  }

  /** Cells {@code from..} are exactly {@code 0, 1, 2, ...}. */
  private static boolean columnNumbers(String[] f, int from) {
    if (f.length - from < 1) return false;
    for (int i = from; i < f.length; i++) if (!f[i].trim().equals(Integer.toString(i - from))) return false;
    return true;
  }

  /**
   * Three or more numbers that rise or fall by one same nonzero step, compared exactly as decimals
   * ({@code 0.1, 0.2, 0.3} is evenly spaced): a header of numbered columns, which read as data would
   * shift every row by one.
   */
  private static boolean evenlySpaced(String[] f) {
    if (f.length < 3) return false;
    BigDecimal[] v = new BigDecimal[f.length];
    try {
      for (int i = 0; i < f.length; i++) {
        v[i] = new BigDecimal(f[i].trim());
        if (Math.abs(v[i].scale()) > 64) return false; // e.g. 1e-999999999: exact differences would take gigabytes
      }
    } catch (NumberFormatException e) {
      return false; // NaN or an infinity: refused as a value later
    }
    BigDecimal step = v[1].subtract(v[0]);
    if (step.signum() == 0) return false;
    for (int i = 2; i < v.length; i++) if (v[i].subtract(v[i - 1]).compareTo(step) != 0) return false;
    return true;
  }
}
