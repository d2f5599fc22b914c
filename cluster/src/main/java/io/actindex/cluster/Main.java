package io.actindex.cluster;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.OptionNames;
import java.io.PrintWriter;
import java.nio.file.NoSuchFileException;
import java.util.Map;
import picocli.CommandLine;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;

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
    cl.setExecutionExceptionHandler((e, c, parsed) -> handle(e, c.getCommandSpec(), err));
    try {
      return cl.execute(args);
    } catch (Error e) { // picocli lets JVM errors through
      err.println("actindex-cluster: internal error: " + oneLine(String.valueOf(e)) + (e instanceof OutOfMemoryError
          ? " (give the driver more memory: ACTINDEX_JAVA_OPTS=-Xmx8g, or spark-submit --driver-memory)" : ""));
      return 1;
    }
  }

  /**
   * Java names the library writes that this command line spells otherwise than {@link OptionNames}'
   * rule ({@code columns.key} would be {@code --columns-key}).
   */
  static final Map<String, String> SPELLED = Map.of(
      "columns.key", "--key-column",
      "columns.code", "--code-column",
      "columns.label", "--label-column",
      "columns.split", "--split-column",
      "writePairs false", "--count-only");

  /**
   * Bad input anywhere in the cause chain (Spark wraps task failures) is exit 2; the rest exit 1. The
   * library names parameters as Java does ({@code radius}, {@code `columns.key`}); {@code command}'s
   * options are printed in their place, as {@code actindex} prints its own.
   */
  static int handle(Throwable e, CommandSpec command, PrintWriter err) {
    for (Throwable c = e; c != null; c = c.getCause()) {
      if (c instanceof BadInputException || c instanceof NoSuchFileException) {
        err.println("actindex-cluster: " + oneLine(c instanceof NoSuchFileException ? c.getMessage() + ": no such file" : refusal(c, command)));
        return 2;
      }
    }
    err.println("actindex-cluster: internal error: " + oneLine(String.valueOf(e)) + " (rerun with --verbose for the stack trace)");
    if (Boolean.getBoolean("actindex.verbose")) e.printStackTrace(err);
    return 1;
  }

  /** The message of a refusal, the Java names in it written as {@code command}'s options. */
  static String refusal(Throwable c, CommandSpec command) {
    if (c instanceof BadParameterException p) {
      String option = OptionNames.option(p.parameter(), SPELLED);
      if (option != null && command.findOption(option) != null) return option + OptionNames.options(p.rest(), SPELLED);
    }
    return OptionNames.options(c.getMessage(), SPELLED);
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
