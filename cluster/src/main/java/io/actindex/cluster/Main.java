package io.actindex.cluster;

import io.actindex.core.BadInputException;
import java.io.PrintWriter;
import java.nio.file.NoSuchFileException;
import picocli.CommandLine;
import picocli.CommandLine.Command;

/**
 * {@code actindex-cluster}: the commands that run on a distributed engine (Apache Spark). Exit
 * codes as for {@code actindex}: 0 success, 2 bad usage or bad input (one line on stderr), 1
 * internal error.
 */
@Command(name = "actindex-cluster", mixinStandardHelpOptions = true, versionProvider = Main.Version.class,
    description = "actindex jobs on Apache Spark (local mode or a cluster through spark-submit).",
    subcommands = {DupesCommand.class})
public final class Main {
  public static void main(String[] args) {
    int code = run(new PrintWriter(System.out, true), new PrintWriter(System.err, true), args);
    System.exit(code);
  }

  /** Runs one command line in-process; returns the exit code. */
  public static int run(PrintWriter out, PrintWriter err, String... args) {
    CommandLine cl = new CommandLine(new Main());
    cl.setOut(out);
    cl.setErr(err);
    cl.setParameterExceptionHandler((e, a) -> {
      err.println("actindex-cluster: " + oneLine(e.getMessage()));
      return 2;
    });
    cl.setExecutionExceptionHandler((e, c, parsed) -> handle(e, err));
    try {
      return cl.execute(args);
    } catch (Error e) { // picocli lets JVM errors through
      err.println("actindex-cluster: internal error: " + oneLine(String.valueOf(e)) + (e instanceof OutOfMemoryError
          ? " (give the driver more memory: ACTINDEX_JAVA_OPTS=-Xmx8g, or spark-submit --driver-memory)" : ""));
      return 1;
    }
  }

  /** Bad input anywhere in the cause chain (Spark wraps task failures) is exit 2; the rest exit 1. */
  static int handle(Throwable e, PrintWriter err) {
    for (Throwable c = e; c != null; c = c.getCause()) {
      if (c instanceof BadInputException || c instanceof NoSuchFileException) {
        err.println("actindex-cluster: " + oneLine(c instanceof NoSuchFileException ? c.getMessage() + ": no such file" : c.getMessage()));
        return 2;
      }
    }
    err.println("actindex-cluster: internal error: " + oneLine(String.valueOf(e)) + " (rerun with --verbose for the stack trace)");
    if (Boolean.getBoolean("actindex.verbose")) e.printStackTrace(err);
    return 1;
  }

  static String oneLine(String s) {
    return BadInputException.snippet(String.valueOf(s), 2000);
  }

  static final class Version implements CommandLine.IVersionProvider {
    @Override
    public String[] getVersion() {
      String v = Main.class.getPackage().getImplementationVersion();
      return new String[] {"actindex-cluster " + (v == null ? "(development build)" : v)};
    }
  }
}
