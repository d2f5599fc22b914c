package io.actindex.edge;

import java.io.IOException;
import java.io.InputStream;
import java.io.PrintStream;
import java.nio.file.AccessDeniedException;
import java.nio.file.Files;
import java.nio.file.InvalidPathException;
import java.nio.file.NoSuchFileException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * {@code java -jar actindex-edge.jar BUNDLE [--inputs]}: scores the rows on standard input and
 * prints {@code row,score,decision,p_value} per row, with {@code --inputs} also {@code range}, the
 * range ratio of {@link EdgeBundle#encodeWithRange} (empty when the bundle has no range guard). Without {@code --inputs} a row is a code
 * written as its bits, {@code 0} and {@code 1} (spaces ignored, commas between bits; an empty cell refused), bit 0 first; with it, a
 * row is the raw input, comma-separated numbers, run through the bundle's model, read as the index's
 * CSV reader reads a file under {@code --header auto}: blank lines skipped, cells may be quoted, a
 * first line of column names skipped with a note on stderr ({@link #firstLine}), a first line that
 * may be either refused, and so is a header with no row after it; a file whose width (its header's,
 * else row 0's) is not the model's inputs is refused as {@code ood score} refuses it ({@link
 * #widthRefusal}); two whole numbers in row 0 of a two-input model are refused ({@link #decimalComma}). Either way standard input is UTF-8, read as
 * the index's CSV reader reads a file ({@link Lines}: empty input, a line ending in CR alone, bytes
 * that are not UTF-8, a NUL byte and a line over {@link RowText#MAX_LINE_BYTES} are refused), and a
 * bad row is named as that reader names it: {@code stdin line L (row R), column C (0-based)}.
 * Exit 0 ok, 2 a bad bundle, row or option (one line on stderr), 1 anything else.
 */
public final class EdgeMain {
  private EdgeMain() {}

  public static void main(String[] args) {
    System.exit(run(args, System.in, System.out, System.err));
  }

  static final String USAGE = "usage: java -jar actindex-edge.jar BUNDLE [--inputs] < rows";

  /** Standard input refused: the message is the whole line printed. */
  private static final class Refused extends Exception {
    Refused(String message) {
      super(message, null, false, false);
    }
  }

  static int run(String[] args, InputStream in, PrintStream out, PrintStream err) {
    if (args.length == 1 && (args[0].equals("--help") || args[0].equals("-h"))) {
      out.println(USAGE);
      out.println("Scores each row of standard input against the bundle: a code as 0/1 bits, or with --inputs a raw input");
      out.println("(comma-separated numbers). Prints row,score,decision,p_value, with --inputs also range (above 1: some layer's activations");
      out.println("larger than every training example's; empty without a range guard). Exit 0 ok, 2 bad bundle, row or option, 1 internal error.");
      return 0;
    }
    String file = null;
    boolean inputs = false;
    for (String a : args) {
      if (a.equals("--inputs") && !inputs) inputs = true;
      else if (file == null && !a.startsWith("-")) file = a;
      else return fail(err, "option or argument " + quote(a) + " not understood; " + USAGE);
    }
    if (file == null) return fail(err, "no bundle file given; " + USAGE);
    try {
      EdgeBundle b = readBundle(file);
      if (b.calibration() == null) return fail(err, escape(file, 200) + ": the bundle holds no calibration");
      if (inputs && b.model() == null) return fail(err, escape(file, 200) + ": --inputs needs a bundle exported --with-model");
      out.println("# a calibrated heuristic, not a guarantee: rates hold only for inputs exchangeable with the calibration data");
      out.println(inputs ? "row,score,decision,p_value,range" : "row,score,decision,p_value");
      Lines lines = new Lines(in, inputs);
      String line = lines.next(), note = null, indexHeader = null;
      if (line == null) return fail(err, "stdin is empty: no rows" + (inputs ? " (blank lines are skipped)" : ""));
      boolean headed = false;
      if (inputs) {
        String where = "stdin line " + lines.number;
        String[] first;
        try {
          first = RowText.cells(line);
          headed = firstLine(first, where);
        } catch (RowText.BadCell e) {
          return fail(err, where + ", column " + e.column() + " (0-based): " + e.reason());
        } catch (IllegalArgumentException e) {
          return fail(err, e.getMessage());
        }
        if (headed) {
          line = lines.next();
          if (line == null) return fail(err, "stdin has a header but no rows (" + where.substring("stdin ".length())
              + " taken as the header: column names, not numbers)" + (first.length == 1 ? otherSeparator(first[0]) : ""));
          // the header gives the file's width, as in the index's CSV reader: checked against the model's before any row
          if (first.length != b.model().layers().get(0).in()) return fail(err, widthRefusal(where + ", the header", first, true, b));
          note = "note: " + where + " taken as a header and skipped (column names, not numbers); row 0 is the next line";
          if (first.length > 1 && RowText.isIndexHeader(first[0].trim())) indexHeader = first[0].trim();
        }
      }
      boolean pairs = inputs && !headed && b.model().layers().get(0).in() == 2;
      int width = inputs ? b.model().layers().get(0).in() : 0;
      List<String> column0 = new ArrayList<>(); // of rows 0 to 2, for the row-index hint
      long row = 0;
      for (; line != null; row++, line = lines.next()) {
        String where = "stdin line " + lines.number + " (row " + row + ")";
        long[] code;
        String range = "";
        try {
          if (pairs && row == 0) decimalComma(line);
          if (inputs) {
            String[] cells = RowText.cells(line); // "1,2," keeps its empty last field (refused), as the index's CSV reader refuses it
            if (row == 0 && !headed && cells.length != width) return fail(err, widthRefusal(where, cells, false, b));
            double[] x = numbers(cells, width);
            if (row < 3) column0.add(cells[0]);
            if (b.hasRangeGuard()) {
              EdgeBundle.Encoded e = b.encodeWithRange(x);
              code = e.code();
              range = "," + e.range();
            } else {
              code = b.encode(x);
              range = ",";
            }
          } else {
            code = bits(line, b);
          }
        } catch (RowText.BadCell e) {
          return fail(err, where + ", column " + e.column() + " (0-based): " + e.reason());
        } catch (IllegalArgumentException e) {
          return fail(err, where + ": " + e.getMessage());
        }
        double s = b.score(code).value();
        out.println(row + "," + s + "," + (b.isOut(code) ? "out" : "in") + "," + b.pValue(s) + range);
        if (row == 2) note(err, note, indexHeader, column0, width);
      }
      if (row < 3) note(err, note, indexHeader, column0, width);
      return 0;
    } catch (EdgeFormatException e) {
      return fail(err, e.getMessage());
    } catch (Refused e) {
      return fail(err, e.getMessage());
    } catch (IOException | RuntimeException e) {
      err.println("internal error: " + escape(String.valueOf(e), 2000));
      return 1;
    }
  }

  /**
   * The bundle at {@code file}, every way it cannot be read turned into an {@link
   * EdgeFormatException} naming the file: missing, a folder, not readable, too large, damaged.
   */
  static EdgeBundle readBundle(String file) throws EdgeFormatException {
    String name = escape(file, 200);
    Path path;
    try {
      path = Path.of(file);
    } catch (InvalidPathException e) {
      throw new EdgeFormatException(name + ": not a valid file name");
    }
    if (Files.isDirectory(path)) throw new EdgeFormatException(name + ": is a folder, not a bundle file");
    try {
      if (Files.exists(path) && Files.size(path) > Integer.MAX_VALUE - 64)
        throw new EdgeFormatException(name + ": " + Files.size(path) + " bytes, more than a bundle this reader holds in memory (2 GiB)");
      return BundleFormat.read(Files.readAllBytes(path), name);
    } catch (EdgeFormatException e) {
      throw e;
    } catch (NoSuchFileException e) {
      throw new EdgeFormatException(name + ": no such file");
    } catch (AccessDeniedException e) {
      throw new EdgeFormatException(name + ": permission denied");
    } catch (IOException e) {
      throw new EdgeFormatException(name + ": cannot be read (" + escape(String.valueOf(e.getMessage()), 200) + ")");
    }
  }

  /**
   * Prints the header note and the row-index hint (a row-index header cell, or column 0 counting 0, 1,
   * 2 or 1, 2, 3 in rows 0 to 2, as the index's CSV reader tells it) on one line, once rows 0 to 2 (or
   * all rows, when fewer) are read; a refusal before that stays one line.
   */
  private static void note(PrintStream err, String note, String indexHeader, List<String> column0, int width) {
    long start = width >= 2 ? RowText.countingFrom(column0) : -1;
    if (indexHeader != null || start >= 0) {
      String hint = "hint: column 0 looks like a row index (" + (indexHeader != null ? "header cell " + quote(indexHeader) : "")
          + (indexHeader != null && start >= 0 ? ", " : "") + (start >= 0 ? "values " + start + ", " + (start + 1) + ", ..." : "")
          + "); it is read as data: write the rows without it (e.g. to_csv(index=False)) if it is not an input";
      note = note == null ? "note: " + hint : note + "; " + hint;
    }
    if (note != null) err.println(note);
  }

  private static int fail(PrintStream err, String message) {
    err.println(message);
    return 2;
  }

  /**
   * The first line of raw inputs (its {@link RowText#cells}), decided by {@link RowText#firstLine} as
   * the index's CSV reader decides under {@code --header auto}: true, a header, for {@code TEXT} and
   * {@code COLUMN_NUMBERS}; false, data, for {@code NUMBERS}. Refused (IllegalArgumentException, the
   * whole message, starting with {@code where}) when it can be both: {@code FEW_COLUMN_NUMBERS}
   * ({@code 0} or {@code 0,1}), {@code EVENLY_SPACED}, or {@code MIXED} text and numbers (naming
   * the first text cell, with the row-index hint when column 0's cell names one, as the index words
   * it). This reader takes no {@code --header}, so the way out is a line of column names before a
   * first row of data. The numbers are listed unquoted, as the index lists them: a decimal number
   * holds no character to escape.
   */
  static boolean firstLine(String[] f, String where) {
    String wayOut = "; this reader takes no --header: delete the line if it is a header, or put a line of column names before it if it is data";
    switch (RowText.firstLine(f)) {
      case TEXT:
      case COLUMN_NUMBERS:
        return true;
      case FEW_COLUMN_NUMBERS:
        throw new IllegalArgumentException(where + " holds " + String.join(", ", Arrays.stream(f).map(String::trim).toArray(String[]::new))
            + ", the column numbers a data-frame library writes over unnamed columns,"
            + " or a row of data (with " + f.length + (f.length == 1 ? " column" : " columns") + " either is likely)" + wayOut);
      case EVENLY_SPACED:
        throw new IllegalArgumentException(where + " holds the evenly spaced numbers " + f[0].trim() + ", " + f[1].trim() + ", ..., "
            + f[f.length - 1].trim() + ", more like column names (columns numbered"
            + " from 1, wavelengths, time offsets) than a row of data" + wayOut);
      case MIXED:
        int text = 0;
        while (RowText.isNumber(f[text].trim())) text++;
        throw new IllegalArgumentException(where + ", column " + text + " (0-based): " + quote(f[text].trim()) + " is text but other cells of the"
            + " line are numbers, so it is unclear whether the line is a header; this reader takes no --header: write a header with a name in"
            + " every cell, or a row with a number in every cell"
            + (RowText.isIndexHeader(f[0].trim()) ? "; column 0 looks like a row index column (header cell " + quote(f[0].trim())
                + "): write the rows without it" : ""));
      default:
        return false;
    }
  }

  /**
   * Row 0 of a two-input model, with no header line before it, that is two whole numbers, the second
   * unsigned ({@code 0,342}), is refused: it reads the same as one value written with a decimal comma
   * (0.342). The index's CSV reader refuses such a file under {@code --header auto} when every row is
   * such a pair, at the end of the file; this reader answers row by row, so it decides on row 0 (a
   * later row such as {@code 0.5,0.7}, which the index takes as proof of two columns, comes too late).
   * Quoted cells are never a decimal comma (a writer that quotes quotes {@code "0,342"} whole).
   */
  private static void decimalComma(String line) {
    if (line.indexOf('"') >= 0) return;
    String[] f = line.split(",", -1);
    if (f.length != 2 || !RowText.isDecimalCommaPart(0, f[0].trim()) || !RowText.isDecimalCommaPart(1, f[1].trim())) return;
    throw new IllegalArgumentException(quote(line.trim()) + " is two whole numbers, the second without a sign, which is also how one value written"
        + " with a decimal comma reads (0,342 for 0.342, as spreadsheets in European languages save it); refused rather than guessed: write the"
        + " numbers with a decimal point, or, if these are the model's two inputs, put a line of column names before the rows");
  }

  /**
   * Rows of {@code cols} values for a model of another number of inputs, worded as {@code ood score}
   * words it (which checks the file's width before reading rows): {@code cells} of the header line
   * ({@code header}) or of row 0, at {@code where}. One cell of numbers apart by spaces, tabs or
   * semicolons gets the separator hint ({@link #otherSeparator}), which {@code ood score} gives for
   * such a cell when it reads it.
   */
  private static String widthRefusal(String where, String[] cells, boolean header, EdgeBundle b) {
    EdgeBundle.Layer first = b.model().layers().get(0);
    int cols = cells.length;
    return where + ": rows have " + cols + (cols == 1 ? " value" : " values") + " but the bundle's model (layer " + quote(first.name())
        + ", weight shape [" + first.out() + ", " + first.in() + "]) takes " + first.in()
        + (cols == 1 ? otherSeparator(cells[0]) : "")
        + (cols == first.in() + 1 ? "; one column too many: is one of them the label (scikit-learn's data frames end with 'target')"
            + " or a row index?" + (header ? " (first column " + quote(cells[0].trim()) + ", last " + quote(cells[cols - 1].trim()) + ")" : "") : "");
  }

  /** A hint when a cell is several numbers apart by spaces, tabs or semicolons, worded as the index's CSV reader words it. */
  static String otherSeparator(String cell) {
    String by = RowText.otherSeparator(cell);
    return by == null ? "" : "; it holds numbers separated by " + by + ", but cells are separated by commas: write the rows with delimiter=','";
  }

  /**
   * Lines of standard input as the index's CSV reader reads a file's ({@link Utf8Lines}), blank lines
   * skipped for raw inputs; its refusals ({@link Refused}) name the byte offset and line on stdin.
   */
  private static final class Lines {
    final Utf8Lines lines;
    final boolean skipBlank;
    long number;

    Lines(InputStream in, boolean skipBlank) {
      this.lines = new Utf8Lines(in);
      this.skipBlank = skipBlank;
    }

    String next() throws IOException, Refused {
      try {
        String s;
        do {
          s = lines.next();
          number = lines.line();
        } while (s != null && skipBlank && s.isBlank());
        return s;
      } catch (Utf8Lines.Bad b) {
        String what = switch (b.fault()) {
          case TOO_LONG -> null;
          case UTF16_BOM -> "a UTF-16 byte order mark: write the rows as UTF-8";
          case NUL -> "a NUL byte: the rows look like UTF-16 or binary; write them as UTF-8 text";
          case CR_INSIDE -> "a carriage return inside a line: the lines end in CR alone (classic Mac OS); write them with LF or CRLF line ends";
          case NOT_UTF8 -> "a byte sequence that is not UTF-8 (e.g. Latin-1 text); write the rows as UTF-8";
        };
        throw new Refused(what == null ? "stdin line " + b.line() + " is longer than " + (RowText.MAX_LINE_BYTES >> 20) + " MiB"
            : "stdin byte " + b.offset() + " (line " + b.line() + "): " + what);
      }
    }
  }

  /**
   * The numbers in {@code cells}, {@code width} of them, refused ({@link RowText.BadCell} naming the
   * column) as the index's CSV reader refuses a cell: too many or too few fields, an empty field,
   * text, NaN or an infinity (also a number too large for a double).
   */
  private static double[] numbers(String[] cells, int width) {
    double[] x = new double[width];
    for (int i = 0; i < cells.length; i++) {
      if (i >= width) throw new RowText.BadCell(i, "too many fields (expected " + width + ", the model's inputs)");
      String f = cells[i].trim();
      if (f.isEmpty()) throw new RowText.BadCell(i, "empty field");
      if (!RowText.isNumber(f)) throw new RowText.BadCell(i, quote(f) + " is not a number" + otherSeparator(f));
      x[i] = RowText.isNotFinite(f) ? Double.NaN : Double.parseDouble(f);
      if (!Double.isFinite(x[i])) throw new RowText.BadCell(i, "value is " + quote(f) + "; only finite numbers are accepted");
    }
    if (cells.length < width) throw new RowText.BadCell(cells.length, "only " + cells.length + " fields (expected " + width + ", the model's inputs)");
    return x;
  }

  private static long[] bits(String line, EdgeBundle b) {
    long[] code = new long[b.words()];
    int bit = 0;
    boolean cellOpen = false, commas = false; // a bit since the last comma; any comma in the row
    for (int i = 0; i < line.length(); i++) {
      char c = line.charAt(i);
      if (c == ',') { // a comma closes a cell: an empty one (",,", a leading comma) is a lost bit, not a separator to skip
        if (!cellOpen) throw new IllegalArgumentException("character " + i + ": an empty field before this comma");
        cellOpen = false;
        commas = true;
        continue;
      }
      if (c == ' ') continue;
      cellOpen = true;
      if (c != '0' && c != '1') throw new IllegalArgumentException("character " + i + ": " + quote(String.valueOf(c)) + " is not 0 or 1");
      if (bit >= b.bits()) throw new IllegalArgumentException("more than the bundle's " + b.bits() + " bits");
      if (c == '1') code[bit >>> 6] |= 1L << (bit & 63);
      bit++;
    }
    if (commas && !cellOpen) throw new IllegalArgumentException("an empty field after the last comma");
    if (bit != b.bits()) throw new IllegalArgumentException(bit + " bits, the bundle's codes have " + b.bits());
    return code;
  }

  /** {@code s} in single quotes for a one-line message: at most 40 characters, control characters escaped. */
  static String quote(String s) {
    return "'" + escape(s, 40) + "'";
  }

  private static String escape(String s, int max) {
    StringBuilder b = new StringBuilder();
    for (int i = 0; i < Math.min(s.length(), max); i++) {
      char c = s.charAt(i);
      if (Character.isISOControl(c) || c == '\u2028' || c == '\u2029') b.append(String.format("\\u%04x", (int) c));
      else b.append(c);
    }
    return s.length() > max ? b + "..." : b.toString();
  }
}
