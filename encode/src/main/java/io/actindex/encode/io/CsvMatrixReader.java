package io.actindex.encode.io;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.Names;
import io.actindex.edge.RowText;
import io.actindex.edge.Utf8Lines;
import java.io.IOException;
import java.io.InputStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayDeque;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.regex.Pattern;

/**
 * Streams a numeric CSV file (comma-separated, one row per line, every field a decimal number)
 * as a matrix. The file must be UTF-8 (a UTF-8 byte order mark is skipped); UTF-16 (a UTF-16 byte
 * order mark or NUL bytes) and other encodings (bytes that are not UTF-8, e.g. Latin-1) are refused
 * naming the byte offset and line, and so are lines that end in CR alone.
 *
 * <p>Header line, by {@link Header}: {@code YES} the first line names the columns; {@code NO} it
 * is data; {@code AUTO} it is a header when every cell is text, or when its cells are exactly the
 * column numbers {@code 0, 1, ..., d-1} (what a data-frame library writes for unnamed columns,
 * optionally after an empty or {@code Unnamed: 0} cell over a row-index column; refused as
 * ambiguous when that is {@code 0} or {@code 0,1} alone, a likely row of codes), data when every
 * cell is a number, and refused (naming the first text cell) when it mixes both, or when its three
 * or more numbers are evenly spaced ({@code 1, 2, ..., d}; {@code 400, 410, 420}), as numbered
 * column names are. {@link #notes()}
 * says which was chosen, and flags a leading column that looks like a row index.
 *
 * <p>Cells may be quoted as RFC 4180 says ({@code "h1,u0"} is one cell, {@code ""} inside quotes
 * one quote; a quoted number is a number), each on one line. Blank lines are skipped. A file
 * without a header whose every row is two whole numbers, the second unsigned, is refused at its
 * end under {@code AUTO} ({@link #decimalComma}: one column written with a decimal comma reads that way),
 * and so is a reader closed before the end (a row limit) whose every row read so far is. A row with a different number of fields, an empty field, text, NaN
 * or an infinity is refused naming the line (1-based, as editors show it), the row and the column
 * (0-based). Lines are limited to {@link #MAX_LINE_BYTES}. Not thread-safe.
 */
public final class CsvMatrixReader implements MatrixReader {
  /** Whether the first line is a header. */
  public enum Header { YES, NO, AUTO }

  /** Longest line accepted, in bytes. */
  public static final int MAX_LINE_BYTES = RowText.MAX_LINE_BYTES;

  private final Path file;
  private final InputStream in;
  private final Utf8Lines lines;
  private final List<String> header;
  private final int cols;
  private final List<String> notes = new ArrayList<>();
  private final ArrayDeque<String> pending = new ArrayDeque<>(); // data lines read ahead
  private final ArrayDeque<Long> pendingLines = new ArrayDeque<>();
  private long line; // line number of the last line read
  private long row;
  /** AUTO found no header, two columns, and every row so far is two whole numbers, the second unsigned: see {@link #decimalComma}. */
  private boolean wholePairs;
  private String firstRowText; // for the message of decimalComma
  private long firstRowLine;
  private boolean ended; // read met the end of the file

  private CsvMatrixReader(Path file, InputStream in, Header mode) throws IOException {
    this.file = file;
    this.in = in;
    this.lines = new Utf8Lines(in);
    String first = nextLine();
    if (first == null) throw new BadInputException(file + ": the CSV file is empty");
    long firstLine = line;
    String[] f = split(first, firstLine);
    this.cols = f.length;
    boolean isHeader = switch (mode) {
      case YES -> {
        notes.add(file + ": line " + firstLine + " taken as the header (`header` yes)");
        yield true;
      }
      case NO -> {
        notes.add(file + ": no header line (`header` no)");
        yield false;
      }
      case AUTO -> detect(f, firstLine);
    };
    if (isHeader) {
      List<String> names = new ArrayList<>(Arrays.stream(f).map(c -> Names.nfc(c.trim())).toList()); // one Unicode form for names
      // np.savetxt(header=...) writes its comment mark first ("# h0,h1,..."): it is not part of the first name
      if (names.getFirst().startsWith("#") && !first.stripLeading().startsWith("\"")) names.set(0, names.getFirst().substring(1).trim());
      header = List.copyOf(names);
    } else {
      header = null;
      pending.add(first);
      pendingLines.add(firstLine);
    }
    while (pending.size() < 3) { // a few rows ahead, to spot a row-index column
      String s = nextLine();
      if (s == null) break;
      pending.add(s);
      pendingLines.add(line);
    }
    if (pending.isEmpty()) throw new BadInputException(file + ": the CSV file has a header but no rows" + (f.length == 1 ? otherSeparator(f[0]) : ""));
    wholePairs = mode == Header.AUTO && header == null && cols == 2;
    // one cell of numbers apart by spaces, tabs or semicolons (np.savetxt's default delimiter): a
    // caller that checks the width (one column) against a model's adds the hint to its refusal
    if (cols == 1) {
      String cell = split(pending.getFirst(), pendingLines.getFirst())[0];
      if (RowText.otherSeparator(cell) != null)
        notes.add(file + ": hint: line " + pendingLines.getFirst() + otherSeparator(cell).replaceFirst("^; it", ""));
    }
    String hint = indexColumnHint();
    if (hint != null) notes.add(hint);
    for (int c = 0; header != null && c < header.size(); c++)
      if (LABEL_HEADER.matcher(header.get(c)).matches())
        notes.add(file + ": hint: column " + c + " is named " + BadInputException.quote(header.get(c)) + ", like a label (scikit-learn's data"
            + " frames end with 'target'); it is read as values like every column: write the file without it if it is not one");
  }

  private static final Pattern LABEL_HEADER = Pattern.compile("label|labels|target|class|y", Pattern.CASE_INSENSITIVE);

  /** Whether a column name is one a label column usually has ({@code label}, {@code target}, {@code y}, ... in any case). */
  public static boolean looksLikeLabel(String columnName) {
    return LABEL_HEADER.matcher(columnName).matches();
  }

  /** The way out of a first line AUTO cannot decide on: every command that reads CSV data takes {@code --header}. */
  static final String HEADER_CHOICE = "pass `header` yes (a header) or `header` no (data)";

  /** The AUTO rule ({@link RowText#firstLine}); adds the note saying what was chosen. */
  private boolean detect(String[] f, long firstLine) {
    switch (RowText.firstLine(f)) {
      case TEXT -> {
        notes.add(file + ": line " + firstLine + " taken as the header (every cell is text; `header` no reads it as data)");
        return true;
      }
      case FEW_COLUMN_NUMBERS -> // "0" or "0,1": as likely a row of 0/1 codes or counts as pandas' header
        throw new BadInputException(file + ": line " + firstLine + " holds " + String.join(", ", Arrays.stream(f).map(String::trim).toList())
            + ", the column numbers a data-frame library writes over unnamed columns, or a row of data (with " + f.length
            + (f.length == 1 ? " column" : " columns") + " either is likely); " + HEADER_CHOICE);
      case COLUMN_NUMBERS -> {
        notes.add(file + ": line " + firstLine + " taken as the header (its cells are the column numbers; `header` no reads it as data)");
        return true;
      }
      case EVENLY_SPACED ->
        throw new BadInputException(file + ": line " + firstLine + " holds the evenly spaced numbers " + f[0].trim() + ", " + f[1].trim() + ", ..., "
            + f[f.length - 1].trim() + ", more like column names (columns numbered from 1, wavelengths, time offsets) than a row of data;"
            + " " + HEADER_CHOICE);
      case NUMBERS -> {
        notes.add(file + ": no header line (every cell of line " + firstLine + " is a number; `header` yes skips it)");
        return false;
      }
      case MIXED -> {
        int firstText = 0;
        while (RowText.isNumber(f[firstText].trim())) firstText++;
        String hint = RowText.isIndexHeader(f[0].trim()) ? "; column 0 looks like a row index column (header cell "
            + BadInputException.quote(f[0].trim()) + "): write the file without it" : "";
        throw new BadInputException(file + ": line " + firstLine + ", column " + firstText + " (0-based): " + BadInputException.quote(f[firstText].trim())
            + " is text but other cells of the line are numbers, so it is unclear whether the line is a header; " + HEADER_CHOICE
            + hint);
      }
    }
    throw new AssertionError();
  }

  /** A note when column 0 holds 0, 1, 2... (or 1, 2, 3...) in the rows read ahead, or has a row-index header cell. */
  private String indexColumnHint() {
    if (cols < 2) return null;
    List<String> column0 = new ArrayList<>();
    for (String s : pending) column0.add(split(s, -1)[0]);
    long start = RowText.countingFrom(column0);
    boolean counting = start >= 0;
    boolean named = header != null && RowText.isIndexHeader(header.getFirst());
    if (!counting && !named) return null;
    return file + ": hint: column 0 looks like a row index (" + (named ? "header cell " + BadInputException.quote(header.getFirst()) : "")
        + (named && counting ? ", " : "") + (counting ? "values " + start + ", " + (start + 1) + ", ..." : "")
        + "); it is read as data: write the file without it (e.g. to_csv(index=False)) if it is not a feature";
  }

  public static CsvMatrixReader open(Path file) throws IOException {
    return open(file, Header.AUTO);
  }

  public static CsvMatrixReader open(Path file, Header mode) throws IOException {
    InputStream in = Files.newInputStream(file);
    try {
      return new CsvMatrixReader(file, in, mode == null ? Header.AUTO : mode);
    } catch (RuntimeException | IOException e) {
      in.close();
      throw e;
    }
  }

  /** Parses {@code yes|no|auto} (any case); BadInputException otherwise. */
  public static Header parseHeader(String s) {
    try {
      return Header.valueOf(s.trim().toUpperCase(Locale.ROOT));
    } catch (IllegalArgumentException e) {
      throw new BadParameterException("header", ": " + BadInputException.quote(s) + " is not yes, no or auto");
    }
  }

  /** Whether {@code s} is a decimal number as this reader takes one ({@code 3}, {@code -0.5}, {@code 1e-3}; no {@code 1f}, no hexadecimal). */
  public static boolean isDecimal(String s) {
    return RowText.isDecimal(s);
  }

  /** The next non-blank line, decoded strictly as UTF-8, or null at the end. */
  private String nextLine() throws IOException {
    String s;
    do {
      s = readLine();
    } while (s != null && s.isBlank());
    return s;
  }

  private String readLine() throws IOException {
    try {
      String s = lines.next();
      line = lines.line();
      return s;
    } catch (Utf8Lines.Bad b) {
      throw refusal(b);
    }
  }

  /** A refusal of the file's bytes ({@link Utf8Lines}) in this reader's words. */
  private BadInputException refusal(Utf8Lines.Bad b) {
    String what = switch (b.fault()) {
      case TOO_LONG -> null;
      case UTF16_BOM -> "a UTF-16 byte order mark: save the file as UTF-8";
      case NUL -> "a NUL byte: the file looks like UTF-16 or binary; save it as UTF-8 text";
      case CR_INSIDE -> "a carriage return inside a line: the file's lines end in CR alone (classic Mac OS); save it with LF or CRLF line ends";
      case NOT_UTF8 -> "a byte sequence that is not UTF-8 (e.g. Latin-1 text); save the file as UTF-8";
    };
    return new BadInputException(what == null ? file + ": line " + b.line() + " is longer than " + (MAX_LINE_BYTES >> 20) + " MiB"
        : file + ": byte " + b.offset() + " (line " + b.line() + "): " + what);
  }

  /** Column names from the header line, or null if the file has none. */
  public List<String> header() {
    return header;
  }

  @Override
  public List<String> columnNames() {
    return header;
  }

  /** How the file was read: the header decision, and a hint when column 0 looks like a row index. */
  @Override
  public List<String> notes() {
    return List.copyOf(notes);
  }

  @Override
  public String source() {
    return file.toString();
  }

  @Override
  public long rows() {
    return -1;
  }

  @Override
  public int cols() {
    return cols;
  }

  @Override
  public boolean exactInFloat() {
    return false;
  }

  @Override
  public long position() {
    return row;
  }

  @Override
  public int read(float[] out, int maxRows) {
    throw new IllegalStateException("CSV values are read as doubles");
  }

  @Override
  public int read(double[] out, int maxRows) throws IOException {
    int n = 0;
    while (n < maxRows) {
      String s;
      long at;
      if (!pending.isEmpty()) {
        s = pending.poll();
        at = pendingLines.poll();
      } else {
        s = nextLine();
        at = line;
      }
      if (s == null) {
        ended = true;
        if (wholePairs && row > 0) throw decimalComma();
        break;
      }
      if (row == 0) {
        firstRowText = s;
        firstRowLine = at;
      }
      try {
        parseRow(s, at, out, n * cols);
      } catch (BadInputException e) {
        wholePairs = false; // that refusal is the one to report, not a guess about the rows before
        throw e;
      }
      n++;
      row++;
    }
    return n;
  }

  /**
   * The cells of a line ({@link RowText#cells}: RFC 4180 quoting undone, a cell on one line). A quote
   * left open, or text after a closing quote, is refused naming line {@code at}; at {@code -1} (a line
   * read ahead, refused later when parsed) the line is split at every comma instead.
   */
  private String[] split(String s, long at) {
    try {
      return RowText.cells(s);
    } catch (RowText.BadCell e) {
      if (at < 0) return s.split(",", -1);
      throw new BadInputException(file + ": line " + at + ", column " + e.column() + " (0-based): " + e.reason());
    }
  }

  private void parseRow(String s, long at, double[] out, int off) {
    if (s.indexOf('"') >= 0) {
      wholePairs = false; // quoted cells: written by a comma-separated writer (it would quote "0,342" whole)
      String[] f = split(s, at);
      for (int col = 0; col < f.length; col++) {
        if (col >= cols) throw new BadInputException(where(at, col) + ": too many fields (expected " + cols + ")");
        out[off + col] = value(f[col].trim(), at, col);
      }
      if (f.length != cols) throw new BadInputException(where(at, f.length) + ": only " + f.length + " fields (expected " + cols + ")");
      return;
    }
    int col = 0, start = 0;
    while (true) {
      int comma = s.indexOf(',', start);
      int end = comma < 0 ? s.length() : comma;
      if (col >= cols) throw new BadInputException(where(at, col) + ": too many fields (expected " + cols + ")");
      out[off + col] = value(s.substring(start, end).trim(), at, col);
      col++;
      if (comma < 0) break;
      start = comma + 1;
    }
    if (col != cols) throw new BadInputException(where(at, col) + ": only " + col + " fields (expected " + cols + ")");
  }

  /** The number in cell {@code f} (trimmed); empty, text, NaN and infinities are refused naming the cell. */
  private double value(String f, long at, int col) {
    if (f.isEmpty()) throw new BadInputException(where(at, col) + ": empty field");
    if (wholePairs && !RowText.isDecimalCommaPart(col, f)) wholePairs = false;
    if (!RowText.isNumber(f)) throw new BadInputException(where(at, col) + ": " + BadInputException.quote(f) + " is not a number" + otherSeparator(f));
    char c0 = f.charAt(f.length() - 1);
    double v = Character.isLetter(c0) ? Double.NaN : Double.parseDouble(f);
    if (!Double.isFinite(v)) throw new BadInputException(where(at, col) + ": value is " + BadInputException.quote(f) + "; only finite numbers are accepted");
    return v;
  }

  /**
   * A file without a header whose every row is two whole numbers, the second without a sign
   * ({@code 0,342}), reads the same as one column of decimals written with a decimal comma (a
   * spreadsheet saved in a European language writes 0.342 as {@code 0,342}); under {@code AUTO}
   * it is refused at the end of the file rather than read as two columns (unless a cell is quoted:
   * a writer that quotes uses the comma as separator), or, when reading stops before the end (a row
   * limit such as {@code --rows}), at {@link #close} over the rows read. {@code --header no}
   * (the user says the lines are comma-separated data) or a header line naming two columns reads it.
   */
  private BadInputException decimalComma() {
    String rows = ended ? "every row" : "every row read (the first " + row + "; reading stopped before the end of the file)";
    return new BadInputException(file + ": " + rows + " is two whole numbers, the second without a sign (line " + firstRowLine + ": "
        + BadInputException.quote(firstRowText.trim()) + "), which is also how one column of decimals written with a decimal comma"
        + " reads (0,342 for 0.342, as spreadsheets in European languages save it); refused rather than guessed: write the numbers"
        + " with a decimal point (pandas: to_csv(decimal='.')), or, if these are two columns of whole numbers, pass `header` no");
  }

  /** A hint when a cell is several numbers apart by spaces, tabs or semicolons (np.savetxt's default delimiter is a space). */
  private static String otherSeparator(String cell) {
    String by = RowText.otherSeparator(cell);
    return by == null ? "" : "; it holds numbers separated by " + by
        + ", but cells are separated by commas: write the file with delimiter=',' (np.savetxt's default is a space)";
  }

  private String where(long at, int col) {
    return file + ": line " + at + " (row " + row + "), column " + col + " (0-based)";
  }

  /** Closes the file; refuses, as at its end, rows read so far that are all decimal-comma lookalikes (see {@link #decimalComma}). */
  @Override
  public void close() throws IOException {
    in.close();
    if (wholePairs && row > 0 && !ended) {
      wholePairs = false; // once
      throw decimalComma();
    }
  }
}
