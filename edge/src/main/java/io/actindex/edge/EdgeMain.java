package io.actindex.edge;

import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStreamReader;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.AccessDeniedException;
import java.nio.file.Files;
import java.nio.file.InvalidPathException;
import java.nio.file.NoSuchFileException;
import java.nio.file.Path;
import java.util.regex.Pattern;

/**
 * {@code java -jar actindex-edge.jar BUNDLE [--inputs]}: scores the rows on standard input and
 * prints {@code row,score,decision,p_value} per row. Without {@code --inputs} a row is a code
 * written as its bits, {@code 0} and {@code 1} (commas and spaces ignored), bit 0 first; with it, a
 * row is the raw input, comma-separated numbers, run through the bundle's model (a first line of
 * column names, {@link #isHeader}, is skipped with a note on stderr). Exit 0 ok, 2 a bad
 * bundle, row or option (one line on stderr), 1 anything else.
 */
public final class EdgeMain {
  private EdgeMain() {}

  public static void main(String[] args) {
    System.exit(run(args, new BufferedReader(new InputStreamReader(System.in, StandardCharsets.UTF_8)), System.out, System.err));
  }

  static final String USAGE = "usage: java -jar actindex-edge.jar BUNDLE [--inputs] < rows";

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
      String line = in.readLine();
      if (line != null && line.startsWith("\uFEFF")) line = line.substring(1); // a UTF-8 byte order mark, skipped as the index's CSV reader does
      if (inputs && line != null && isHeader(line)) {
        err.println("note: stdin line 1 taken as a header and skipped (column names, not numbers); row 0 is the next line");
        line = in.readLine();
      }
      for (long row = 0; line != null; row++, line = in.readLine()) {
        long[] code;
        try {
          code = inputs ? b.encode(numbers(line)) : bits(line, b);
        } catch (IllegalArgumentException e) {
          return fail(err, "stdin row " + row + ": " + e.getMessage());
        }
        double s = b.score(code).value();
        out.println(row + "," + s + "," + (b.isOut(code) ? "out" : "in") + "," + b.pValue(s));
      }
      return 0;
    } catch (EdgeFormatException e) {
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
   * A decimal number as the index's CSV reader takes one (the same patterns as {@code
   * CsvMatrixReader}'s, written again because this module depends on nothing): Java's own parser
   * also takes {@code 1f}, {@code 1d} and hexadecimal {@code 0x1p3}, which the index refuses, so an
   * input the index would refuse is never scored here.
   */
  private static final Pattern DECIMAL = Pattern.compile("[+-]?(\\d+\\.?\\d*|\\.\\d+)([eE][+-]?\\d+)?"),
      NOT_FINITE = Pattern.compile("[+-]?(?i:nan|inf|infinity)");

  /**
   * Whether a first line of raw inputs is a header, as the index's CSV reader decides by default:
   * every cell is text, or the cells are the column numbers 0, 1, ..., d-1 that pandas writes over
   * unnamed columns (d at least 3: a line "0" or "0,1" is read as data, since it can be both).
   */
  static boolean isHeader(String line) {
    String[] parts = line.split(",", -1);
    boolean text = true, numbered = parts.length >= 3;
    for (int i = 0; i < parts.length; i++) {
      String f = parts[i].trim();
      if (DECIMAL.matcher(f).matches() || NOT_FINITE.matcher(f).matches() || f.isEmpty()) text = false;
      if (!f.equals(Integer.toString(i))) numbered = false;
    }
    return text || numbered;
  }

  private static double[] numbers(String line) {
    String[] parts = line.split(",", -1); // "1,2," keeps its empty last field (refused below), as the index's CSV reader refuses it
    double[] x = new double[parts.length];
    for (int i = 0; i < x.length; i++) {
      String f = parts[i].trim();
      if (NOT_FINITE.matcher(f).matches()) throw new IllegalArgumentException("column " + i + ": not finite");
      if (!DECIMAL.matcher(f).matches()) throw new IllegalArgumentException("column " + i + ": " + quote(f) + " is not a number");
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
