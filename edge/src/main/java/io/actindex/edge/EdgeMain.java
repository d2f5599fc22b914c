package io.actindex.edge;

import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStreamReader;
import java.io.PrintStream;
import java.io.Reader;
import java.nio.charset.StandardCharsets;
import java.nio.file.AccessDeniedException;
import java.nio.file.Files;
import java.nio.file.InvalidPathException;
import java.nio.file.NoSuchFileException;
import java.nio.file.Path;

/**
 * {@code java -jar actindex-edge.jar BUNDLE [--inputs]}: scores the rows on standard input and
 * prints {@code row,score,decision,p_value} per row. Without {@code --inputs} a row is a code
 * written as its bits, {@code 0} and {@code 1} (commas and spaces ignored), bit 0 first; with it, a
 * row is the raw input, comma-separated numbers, run through the bundle's model, read as the index's
 * CSV reader reads a file under {@code --header auto}: blank lines skipped, cells may be quoted, a
 * first line of column names skipped with a note on stderr ({@link #firstLine}), a first line that
 * may be either refused, and so is a header with no row after it; two whole numbers in row 0 of a
 * two-input model are refused ({@link #decimalComma}). Either way empty input and lines ending in CR
 * alone are refused. Exit 0 ok, 2 a bad bundle, row or option (one line on stderr), 1 anything else.
 */
public final class EdgeMain {
  private EdgeMain() {}

  public static void main(String[] args) {
    System.exit(run(args, new BufferedReader(new InputStreamReader(System.in, StandardCharsets.UTF_8)), System.out, System.err));
  }

  static final String USAGE = "usage: java -jar actindex-edge.jar BUNDLE [--inputs] < rows";

  /** Standard input refused: the message is the whole line printed. */
  private static final class Refused extends Exception {
    Refused(String message) {
      super(message, null, false, false);
    }
  }

  static int run(String[] args, BufferedReader in, PrintStream out, PrintStream err) {
    if (args.length == 1 && (args[0].equals("--help") || args[0].equals("-h"))) {
      out.println(USAGE);
      out.println("Scores each row of standard input against the bundle: a code as 0/1 bits, or with --inputs a raw input");
      out.println("(comma-separated numbers). Prints row,score,decision,p_value. Exit 0 ok, 2 bad bundle, row or option, 1 internal error.");
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
      out.println("row,score,decision,p_value");
      Lines lines = new Lines(in, inputs);
      String line = lines.next(), note = null;
      if (line == null) return fail(err, "stdin holds no rows (it is empty" + (inputs ? " or blank)" : ")"));
      boolean headed = false;
      if (inputs) {
        String where = "stdin line " + lines.number;
        String[] first;
        try {
          first = RowText.cells(line);
          headed = firstLine(first);
        } catch (IllegalArgumentException e) {
          return fail(err, where + ": " + e.getMessage());
        }
        if (headed) {
          line = lines.next();
          if (line == null) return fail(err, where + " is taken as a header (column names, not numbers) and no row follows it"
              + (first.length == 1 ? otherSeparator(first[0]) : ""));
          note = "note: " + where + " taken as a header and skipped (column names, not numbers); row 0 is the next line";
          if (first.length > 1 && RowText.isIndexHeader(first[0].trim()))
            note += "; hint: column 0 looks like a row index (header cell " + quote(first[0].trim()) + "); it is read as data: write the rows without it"
                + " (e.g. to_csv(index=False)) if it is not an input";
        }
      }
      boolean pairs = inputs && !headed && b.model().layers().get(0).in() == 2;
      for (long row = 0; line != null; row++, line = lines.next()) {
        long[] code;
        try {
          if (pairs && row == 0) decimalComma(line);
          code = inputs ? b.encode(numbers(line)) : bits(line, b);
        } catch (IllegalArgumentException e) {
          return fail(err, "stdin row " + row + ": " + e.getMessage());
        }
        if (note != null) err.println(note); // once row 0 is read: a refusal stays one line
        note = null;
        double s = b.score(code).value();
        out.println(row + "," + s + "," + (b.isOut(code) ? "out" : "in") + "," + b.pValue(s));
      }
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

  private static int fail(PrintStream err, String message) {
    err.println(message);
    return 2;
  }

  /**
   * The first line of raw inputs (its {@link RowText#cells}), decided by {@link RowText#firstLine} as
   * the index's CSV reader decides under {@code --header auto}: true, a header, for {@code TEXT} and
   * {@code COLUMN_NUMBERS}; false, data, otherwise. Refused (IllegalArgumentException) when it can be
   * both: {@code FEW_COLUMN_NUMBERS} ({@code 0} or {@code 0,1}) or {@code EVENLY_SPACED}.
   * A line mixing text and numbers is data here, refused when read as a row (the index refuses the
   * line as unclear). This reader takes no {@code --header}, so the way out is a line of column names
   * before a first row of data.
   */
  static boolean firstLine(String[] f) {
    String cells = String.join(", ", java.util.Arrays.stream(f).map(String::trim).toArray(String[]::new));
    String wayOut = "; this reader takes no --header: delete the line if it is a header, or put a line of column names before it if it is data";
    switch (RowText.firstLine(f)) {
      case TEXT:
      case COLUMN_NUMBERS:
        return true;
      case FEW_COLUMN_NUMBERS:
        throw new IllegalArgumentException("holds " + quote(cells) + ", the column numbers a data-frame library writes over unnamed columns, or a row"
            + " of data (with " + f.length + (f.length == 1 ? " column" : " columns") + " either is likely)" + wayOut);
      case EVENLY_SPACED:
        throw new IllegalArgumentException("holds the evenly spaced numbers " + quote(cells) + ", more like column names (columns numbered from 1,"
            + " wavelengths, time offsets) than a row of data" + wayOut);
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

  /** A hint when a cell is several numbers apart by spaces, tabs or semicolons, worded as the index's CSV reader words it. */
  static String otherSeparator(String cell) {
    String by = RowText.otherSeparator(cell);
    return by == null ? "" : "; it holds numbers separated by " + by + ", but cells are separated by commas: write the rows with delimiter=','";
  }

  /**
   * Lines of standard input, split at LF (a CR before it dropped), a UTF-8 byte order mark before the
   * first skipped, blank lines skipped for raw inputs, counted from 1. A CR anywhere else is refused
   * ({@link Refused}): lines that end in CR alone (classic Mac OS) are one line to the index's CSV
   * reader, which refuses them, so they are refused here rather than read as rows.
   */
  private static final class Lines {
    final Reader in;
    final boolean skipBlank;
    final char[] buf = new char[8192];
    int pos, len;
    final StringBuilder line = new StringBuilder();
    long number;

    Lines(Reader in, boolean skipBlank) {
      this.in = in;
      this.skipBlank = skipBlank;
    }

    String next() throws IOException, Refused {
      String s;
      do {
        s = read();
        if (s != null && number == 1 && s.startsWith("\uFEFF")) s = s.substring(1); // as the index's CSV reader skips it
      } while (s != null && skipBlank && s.isBlank());
      return s;
    }

    private String read() throws IOException, Refused {
      line.setLength(0);
      boolean any = false;
      while (true) {
        if (pos == len) {
          len = Math.max(0, in.read(buf));
          pos = 0;
          if (len == 0) break;
        }
        any = true;
        char c = buf[pos++];
        if (c == '\n') break;
        line.append(c);
      }
      if (!any) return null;
      number++;
      int n = line.length();
      if (n > 0 && line.charAt(n - 1) == '\r') line.setLength(--n);
      if (line.indexOf("\r") >= 0)
        throw new Refused("stdin line " + number + ": a carriage return inside a line: the lines end in CR alone (classic Mac OS);"
            + " write them with LF or CRLF line ends");
      return line.toString();
    }
  }

  private static double[] numbers(String line) {
    String[] parts = RowText.cells(line); // "1,2," keeps its empty last field (refused below), as the index's CSV reader refuses it
    double[] x = new double[parts.length];
    for (int i = 0; i < x.length; i++) {
      String f = parts[i].trim();
      if (RowText.isNotFinite(f)) throw new IllegalArgumentException("column " + i + ": not finite");
      if (!RowText.isDecimal(f)) throw new IllegalArgumentException("column " + i + ": " + quote(f) + " is not a number" + otherSeparator(f));
      x[i] = Double.parseDouble(f);
      if (!Double.isFinite(x[i])) throw new IllegalArgumentException("column " + i + ": not finite");
    }
    return x;
  }

  private static long[] bits(String line, EdgeBundle b) {
    long[] code = new long[b.words()];
    int bit = 0;
    for (int i = 0; i < line.length(); i++) {
      char c = line.charAt(i);
      if (c == ',' || c == ' ') continue;
      if (c != '0' && c != '1') throw new IllegalArgumentException("character " + i + ": " + quote(String.valueOf(c)) + " is not 0 or 1");
      if (bit >= b.bits()) throw new IllegalArgumentException("more than the bundle's " + b.bits() + " bits");
      if (c == '1') code[bit >>> 6] |= 1L << (bit & 63);
      bit++;
    }
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
