package io.actindex.cli;

import java.io.IOException;
import java.io.InputStream;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.ServiceLoader;
import java.util.concurrent.Callable;
import picocli.CommandLine;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Spec;

/**
 * Entry point of the {@code actindex} command: one subcommand class per operation, shared options
 * in mixins, explicit exit codes ({@link ExitCodes}). Extra subcommands (the demo) are found with
 * {@link ServiceLoader} as {@link ExtraCommand} providers, so modules above {@code cli} can plug in.
 */
@Command(
    name = "actindex",
    mixinStandardHelpOptions = true,
    versionProvider = Main.Version.class,
    synopsisSubcommandLabel = "COMMAND",
    description = "Exact Hamming search over the on/off codes of ReLU networks.",
    subcommands = {
      BuildCommand.class, AddCommand.class, InfoCommand.class, NearestCommand.class,
      RegionCommand.class, CensusCommand.class, CompareCommand.class, FidelityCommand.class, DupesCommand.class,
      OodCommand.class, ExportEdgeCommand.class, ExportCodesCommand.class, ReportCommand.class, DeleteCommand.class, CompactCommand.class, CheckCommand.class,
      CalibratePlannerCommand.class,
      CommandLine.HelpCommand.class
    },
    footer = {"", "Exit codes: 0 ok, 2 bad usage or bad input, 1 internal error.",
        "Run 'actindex COMMAND --help' for the options of one command."})
public final class Main implements Callable<Integer> {

  /**
   * Lucene logs through java.util.logging at INFO when it finds the Vector API; stderr is for our
   * messages, so only its warnings pass. Held in a field: loggers are weakly referenced.
   */
  private static final java.util.logging.Logger LUCENE_LOG = java.util.logging.Logger.getLogger("org.apache.lucene");

  /** Its notice that the Vector API module is not readable (plain 'java -jar') is a speed hint, not ours to print. */
  private static final java.util.logging.Logger LUCENE_VECTOR_LOG =
      java.util.logging.Logger.getLogger("org.apache.lucene.internal.vectorization");

  static {
    LUCENE_LOG.setLevel(java.util.logging.Level.WARNING);
    LUCENE_VECTOR_LOG.setLevel(java.util.logging.Level.SEVERE);
  }

  @Spec CommandSpec spec;

  @Mixin Verbose verbose;

  /** Without a command: print the usage on stderr, exit 2 (bad usage). */
  @Override
  public Integer call() {
    spec.commandLine().usage(spec.commandLine().getErr());
    return ExitCodes.USAGE;
  }

  /** The configured command line (handlers, extra commands), writing to the given streams. */
  public static CommandLine commandLine(PrintWriter out, PrintWriter err) {
    CommandLine cl = new CommandLine(new Main());
    for (ExtraCommand extra : ServiceLoader.load(ExtraCommand.class)) cl.addSubcommand(extra);
    cl.setOut(out);
    cl.setErr(err);
    cl.setParameterExceptionHandler(new ErrorHandler());
    cl.setExecutionExceptionHandler(new ErrorHandler());
    cl.setCaseInsensitiveEnumValuesAllowed(true);
    cl.registerConverter(Path.class, Main::path); // after the extra commands: it reaches the commands present
    cl.registerConverter(int.class, Main::wholeInt);
    cl.registerConverter(Integer.class, Main::wholeInt);
    cl.registerConverter(long.class, Main::wholeLong);
    cl.registerConverter(Long.class, Main::wholeLong);
    return cl;
  }

  /**
   * A path option's value; an empty one (an unset shell variable) is refused, since {@code Path.of("")}
   * is the current folder: {@code build --out ""} built an index there. A blank one too: {@code
   * build --out " "} built an index in a folder named by a space.
   */
  private static Path path(String value) {
    if (value.isEmpty()) throw new CommandLine.TypeConversionException("the path is empty");
    if (value.isBlank()) throw new CommandLine.TypeConversionException("the path is blank (only spaces)");
    return Path.of(value);
  }

  /**
   * A whole-number option's value, spaces (and other characters up to U+0020) around it dropped as
   * decimal options drop them ({@code Double.valueOf} trims): {@code -k ' 3'} is 3, as {@code --tol ' 0.5'}
   * is 0.5. Anything else that is not an int is refused with picocli's own words.
   */
  private static Integer wholeInt(String value) {
    try {
      return Integer.valueOf(value.trim());
    } catch (NumberFormatException e) {
      throw new CommandLine.TypeConversionException("'" + value + "' is not an int");
    }
  }

  /** {@link #wholeInt} for a {@code long} option ({@code --seed}). */
  private static Long wholeLong(String value) {
    try {
      return Long.valueOf(value.trim());
    } catch (NumberFormatException e) {
      throw new CommandLine.TypeConversionException("'" + value + "' is not a long");
    }
  }

  /** Runs one command line and returns its exit code (for tests and embedding). */
  public static int run(PrintWriter out, PrintWriter err, String... args) {
    int code = ErrorHandler.execute(commandLine(out, err), args);
    out.flush();
    err.flush();
    return code;
  }

  public static void main(String[] args) {
    PrintWriter out = new PrintWriter(new java.io.BufferedWriter(
        new java.io.OutputStreamWriter(System.out, StandardCharsets.UTF_8), 1 << 16));
    PrintWriter err = new PrintWriter(new java.io.OutputStreamWriter(System.err, StandardCharsets.UTF_8), true);
    String garbled = garbledArgument(System.getProperty("sun.jnu.encoding"), args);
    if (garbled != null) {
      err.println("actindex: " + garbled);
      System.exit(2);
    }
    System.exit(run(out, err, args));
  }

  /**
   * Why the arguments cannot be trusted, or null. Java decodes the command line in the locale's
   * character set ({@code sun.jnu.encoding}); under the C or POSIX locale (ASCII, a shell or
   * container with no LANG set) every byte of {@code café} past ASCII becomes U+FFFD, so {@code
   * --where "key = café"} would quietly match nothing and a file of that name would not be found.
   * An argument holding U+FFFD in a locale that is not UTF-8 is such a loss.
   */
  static String garbledArgument(String encoding, String... args) {
    if (encoding == null || encoding.equalsIgnoreCase("UTF-8") || encoding.equalsIgnoreCase("UTF8")) return null;
    for (int i = 0; i < args.length; i++)
      if (args[i].indexOf('\uFFFD') >= 0)
        return "argument " + (i + 1) + " ('" + io.actindex.core.BadInputException.snippet(args[i], 60) + "') holds characters that the locale's "
            + "character set (" + encoding + ") cannot carry, so they arrived as U+FFFD and would be read wrong; run in a UTF-8 locale, "
            + "e.g. LC_ALL=C.UTF-8 (bin/actindex switches to it by itself)";
    return null;
  }

  /** The version from the build (a resource filtered by Maven). */
  static final class Version implements CommandLine.IVersionProvider {
    @Override
    public String[] getVersion() throws IOException {
      try (InputStream in = Main.class.getResourceAsStream("version.txt")) {
        String v = in == null ? "unknown" : new String(in.readAllBytes(), StandardCharsets.UTF_8).trim();
        return new String[] {"actindex " + v, "Java " + Runtime.version()};
      }
    }
  }
}
