package io.actindex.encode.io;

import io.actindex.core.BadInputException;
import java.io.BufferedReader;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;

/**
 * Streams a numeric CSV file (comma-separated, one row per line, every field a decimal number)
 * as a matrix. The header is optional: a first line with any field that is not a number is taken
 * as column names. Blank lines are skipped. A row with a different number of fields, an empty
 * field, text, NaN or an infinity is refused naming the line (1-based, as editors show it), the
 * row and the column (0-based). Not thread-safe.
 */
public final class CsvMatrixReader implements MatrixReader {
  private final Path file;
  private final BufferedReader in;
  private final List<String> header;
  private final int cols;
  private String pending; // first data line, read while detecting the header
  private long line; // line number of the last line read
  private long pendingLine;
  private long row;

  private CsvMatrixReader(Path file, BufferedReader in) throws IOException {
    this.file = file;
    this.in = in;
    String first = nextLine();
    if (first == null) throw new BadInputException(file + ": the CSV file is empty");
    String[] f = first.split(",", -1);
    boolean isHeader = false;
    for (String s : f) if (!isNumber(s.trim())) isHeader = true;
    if (isHeader) {
      List<String> names = new ArrayList<>();
      for (String s : f) names.add(s.trim());
      header = List.copyOf(names);
      pending = nextLine();
      if (pending == null) throw new BadInputException(file + ": the CSV file has a header but no rows");
    } else {
      header = null;
      pending = first;
    }
    pendingLine = line;
    cols = f.length;
  }

  public static CsvMatrixReader open(Path file) throws IOException {
    BufferedReader in = Files.newBufferedReader(file, StandardCharsets.UTF_8);
    try {
      return new CsvMatrixReader(file, in);
    } catch (RuntimeException | IOException e) {
      in.close();
      throw e;
    }
  }

  /** A decimal number, or a NaN/infinity word (recognised so that it is refused as a value, not taken for a header). */
  private static final java.util.regex.Pattern NUMBER =
      java.util.regex.Pattern.compile("[+-]?(\\d+\\.?\\d*|\\.\\d+)([eE][+-]?\\d+)?|[+-]?(?i:nan|inf|infinity)");

  private static boolean isNumber(String s) {
    return NUMBER.matcher(s).matches();
  }

  private String nextLine() throws IOException {
    String s;
    do {
      s = in.readLine();
      line++;
    } while (s != null && s.isBlank());
    if (s != null && line == 1 && s.startsWith("\uFEFF")) s = s.substring(1);
    return s;
  }

  /** Column names from the header line, or null if the file has none. */
  public List<String> header() {
    return header;
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
      if (pending != null) {
        s = pending;
        at = pendingLine;
        pending = null;
      } else {
        s = nextLine();
        at = line;
      }
      if (s == null) break;
      parseRow(s, at, out, n * cols);
      n++;
      row++;
    }
    return n;
  }

  private void parseRow(String s, long at, double[] out, int off) {
    int col = 0, start = 0;
    while (true) {
      int comma = s.indexOf(',', start);
      int end = comma < 0 ? s.length() : comma;
      if (col >= cols) throw new BadInputException(where(at, col) + ": too many fields (expected " + cols + ")");
      String f = s.substring(start, end).trim();
      if (f.isEmpty()) throw new BadInputException(where(at, col) + ": empty field");
      if (!isNumber(f)) throw new BadInputException(where(at, col) + ": '" + f + "' is not a number");
      char c0 = f.charAt(f.length() - 1);
      double v = Character.isLetter(c0) ? Double.NaN : Double.parseDouble(f);
      if (!Double.isFinite(v)) throw new BadInputException(where(at, col) + ": value is " + f + "; only finite numbers are accepted");
      out[off + col] = v;
      col++;
      if (comma < 0) break;
      start = comma + 1;
    }
    if (col != cols) throw new BadInputException(where(at, col) + ": only " + col + " fields (expected " + cols + ")");
  }

  private String where(long at, int col) {
    return file + ": line " + at + " (row " + row + "), column " + col + " (0-based)";
  }

  @Override
  public void close() throws IOException {
    in.close();
  }
}
