package io.actindex.cli;

import java.io.PrintWriter;
import java.io.StringWriter;
import java.util.Arrays;

/** Runs the command line in-process with captured stdout and stderr. */
final class Cli {
  private Cli() {}

  /** The outcome of one run. */
  record Result(int code, String out, String err, String[] args) {
    /** A description for assertion messages. */
    String describe() {
      return "actindex " + String.join(" ", args) + "\n--- exit " + code + "\n--- stdout\n" + out + "\n--- stderr\n" + err;
    }
  }

  static Result run(String... args) {
    StringWriter out = new StringWriter(), err = new StringWriter();
    int code = Main.run(new PrintWriter(out), new PrintWriter(err), args);
    return new Result(code, out.toString(), err.toString(), Arrays.copyOf(args, args.length));
  }
}
