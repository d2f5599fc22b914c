package io.actindex.edge;

import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStreamReader;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.NoSuchFileException;
import java.nio.file.Path;

/**
 * {@code java -jar actindex-edge.jar BUNDLE [--inputs]}: scores the rows on standard input and
 * prints {@code row,score,decision,p_value} per row. Without {@code --inputs} a row is a code
 * written as its bits, {@code 0} and {@code 1} (commas and spaces ignored), bit 0 first; with it, a
 * row is the raw input, comma-separated numbers, run through the bundle's model. Exit 0 ok, 2 a bad
 * bundle, row or option (one line on stderr), 1 anything else.
 */
public final class EdgeMain {
  private EdgeMain() {}

  public static void main(String[] args) {
    System.exit(run(args, new BufferedReader(new InputStreamReader(System.in, StandardCharsets.UTF_8)), System.out, System.err));
  }

  static int run(String[] args, BufferedReader in, PrintStream out, PrintStream err) {
    if (args.length < 1 || args.length > 2 || (args.length == 2 && !args[1].equals("--inputs"))) {
      err.println("usage: java -jar actindex-edge.jar BUNDLE [--inputs] < rows");
      return 2;
    }
    boolean inputs = args.length == 2;
    try {
      EdgeBundle b = BundleFormat.read(Path.of(args[0]));
      if (b.calibration() == null) return fail(err, args[0] + ": the bundle holds no calibration");
      if (inputs && b.model() == null) return fail(err, args[0] + ": --inputs needs a bundle exported --with-model");
      out.println("# a calibrated heuristic, not a guarantee: rates hold only for inputs exchangeable with the calibration data");
      out.println("row,score,decision,p_value");
      String line;
      for (long row = 0; (line = in.readLine()) != null; row++) {
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
    } catch (NoSuchFileException e) {
      return fail(err, e.getFile() + ": no such file");
    } catch (IOException | RuntimeException e) {
      err.println("internal error: " + e);
      return 1;
    }
  }

  private static int fail(PrintStream err, String message) {
    err.println(message);
    return 2;
  }

  private static double[] numbers(String line) {
    String[] parts = line.split(",");
    double[] x = new double[parts.length];
    for (int i = 0; i < x.length; i++) {
      try {
        x[i] = Double.parseDouble(parts[i].trim());
      } catch (NumberFormatException e) {
        throw new IllegalArgumentException("column " + i + ": '" + prefix(parts[i]) + "' is not a number");
      }
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
      if (c != '0' && c != '1') throw new IllegalArgumentException("column " + i + ": '" + c + "' is not 0 or 1");
      if (bit >= b.bits()) throw new IllegalArgumentException("more than the bundle's " + b.bits() + " bits");
      if (c == '1') code[bit >>> 6] |= 1L << (bit & 63);
      bit++;
    }
    if (bit != b.bits()) throw new IllegalArgumentException(bit + " bits, the bundle's codes have " + b.bits());
    return code;
  }

  private static String prefix(String s) {
    return s.length() <= 20 ? s : s.substring(0, 20) + "...";
  }
}
