package io.actindex.cli;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.DiskFull;
import io.actindex.query.Snippet;
import java.io.PrintWriter;
import java.nio.file.AccessDeniedException;
import java.nio.file.FileSystemException;
import java.nio.file.InvalidPathException;
import java.nio.file.NoSuchFileException;
import java.nio.file.NotDirectoryException;
import java.nio.file.Path;
import java.util.List;
import picocli.CommandLine;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.ParseResult;

/**
 * Maps failures to exit codes and one-line messages on stderr: bad usage and bad input exit 2
 * with the message (no stack trace); anything else is an internal error, exit 1, one line with a
 * hint to rerun with {@code --verbose}, which prints the stack trace. JVM errors are caught too
 * ({@link #execute}): running out of memory says how to give the JVM more, and no {@code Error}
 * reaches the user as a stack trace. Messages are printed on one line (control characters
 * escaped) and cut at {@link #MAX_MESSAGE} characters.
 */
final class ErrorHandler implements CommandLine.IParameterExceptionHandler, CommandLine.IExecutionExceptionHandler {
  /** Longest message printed; longer ones are cut (a safety net: refusals quote short prefixes). */
  static final int MAX_MESSAGE = 2000;

  /**
   * Runs {@code cl} like {@link CommandLine#execute}, but also turns a JVM {@code Error} that
   * escapes the command (picocli passes those through) into exit code 1 and one line.
   */
  static int execute(CommandLine cl, String... args) {
    try {
      return cl.execute(args);
    } catch (Error e) {
      CommandLine cmd = cl;
      ParseResult parsed = cl.getParseResult();
      for (ParseResult p = parsed; p != null; p = p.subcommand()) cmd = p.commandSpec().commandLine();
      return new ErrorHandler().internal(e, cmd.getCommandSpec().qualifiedName(), cmd.getErr(), verbose(parsed));
    }
  }

  @Override
  public int handleParseException(ParameterException ex, String[] args) {
    CommandLine cl = ex.getCommandLine();
    PrintWriter err = cl.getErr();
    String name = cl.getCommandSpec().qualifiedName();
    err.println(name + ": " + oneLine(message(ex)) + " (run '" + name + " --help' for usage)");
    err.flush();
    return ExitCodes.USAGE;
  }

  /**
   * Picocli's message, and for a mistyped option or command the most alike name it knows ("did you
   * mean"); a word where a command expects one of its commands is called an unknown command.
   */
  private static String message(ParameterException ex) {
    if (!(ex instanceof CommandLine.UnmatchedArgumentException u) || u.getUnmatched().isEmpty()) return ex.getMessage();
    String first = u.getUnmatched().getFirst();
    CommandLine cl = u.getCommandLine();
    boolean command = !cl.getSubcommands().isEmpty() && !first.startsWith("-");
    String near = nearest(first, first.startsWith("-") ? cl.getCommandSpec().optionsMap().keySet() : cl.getSubcommands().keySet());
    String hint = near == null ? "" : "; did you mean " + near + "?";
    String build = buildOnly(cl, first);
    if (build != null) hint = "; " + build + " is a build option: add encodes its rows the way the index was built (its rule, layers,"
        + " kept magnitudes and, for --inputs, the model stored in the index)";
    return (command ? "unknown command '" + first + "'" : ex.getMessage()) + hint;
  }

  /** {@code typed} (up to any {@code =VALUE}) when the command is {@code add} and it is an option of {@code build}; else null. */
  private static String buildOnly(CommandLine cl, String typed) {
    CommandLine parent = cl.getParent();
    if (!"add".equals(cl.getCommandName()) || parent == null || parent.getSubcommands().get("build") == null) return null;
    String option = typed.contains("=") ? typed.substring(0, typed.indexOf('=')) : typed;
    return parent.getSubcommands().get("build").getCommandSpec().optionsMap().containsKey(option) ? option : null;
  }

  /**
   * The name of {@code names} fewest edits (insert, delete, replace, swap two neighbours) away from
   * what was typed, leading dashes and any {@code =VALUE} left out, when it is at most one edit per
   * three characters (at least one); null when none is that near. Picocli's own suggestion ranks by
   * shared letter pairs, which put {@code --index} before {@code --inputs} for {@code --input} and
   * had none for {@code --bwhere}.
   */
  static String nearest(String typed, java.util.Collection<String> names) {
    String t = bare(typed);
    int eq = t.indexOf('=');
    if (eq >= 0) t = t.substring(0, eq);
    String best = null;
    int bestEdits = Math.max(1, t.length() / 3) + 1;
    for (String n : new java.util.TreeSet<>(names)) {
      int e = edits(t, bare(n));
      if (e < bestEdits) {
        best = n;
        bestEdits = e;
      }
    }
    return best;
  }

  private static String bare(String name) {
    int i = 0;
    while (i < name.length() && name.charAt(i) == '-') i++;
    return name.substring(i);
  }

  /** Edit distance with swaps of neighbours (optimal string alignment). */
  static int edits(String a, String b) {
    int[][] d = new int[a.length() + 1][b.length() + 1];
    for (int i = 0; i <= a.length(); i++) d[i][0] = i;
    for (int j = 0; j <= b.length(); j++) d[0][j] = j;
    for (int i = 1; i <= a.length(); i++)
      for (int j = 1; j <= b.length(); j++) {
        int cost = a.charAt(i - 1) == b.charAt(j - 1) ? 0 : 1;
        d[i][j] = Math.min(Math.min(d[i - 1][j] + 1, d[i][j - 1] + 1), d[i - 1][j - 1] + cost);
        if (i > 1 && j > 1 && a.charAt(i - 1) == b.charAt(j - 2) && a.charAt(i - 2) == b.charAt(j - 1))
          d[i][j] = Math.min(d[i][j], d[i - 2][j - 2] + 1);
      }
    return d[a.length()][b.length()];
  }

  @Override
  public int handleExecutionException(Exception ex, CommandLine cl, ParseResult parsed) {
    PrintWriter err = cl.getErr();
    String name = cl.getCommandSpec().qualifiedName();
    String refusal = refusal(ex, cl.getCommandSpec());
    if (refusal != null) {
      err.println(name + ": " + oneLine(refusal));
      if (verbose(parsed)) ex.printStackTrace(err);
      err.flush();
      return ExitCodes.USAGE;
    }
    if (ex instanceof ParameterException pe) return handleParseException(pe, new String[0]);
    return internal(ex, name, err, verbose(parsed));
  }

  /** Exit 1 with one line naming the root cause (and the stack trace with --verbose). */
  private int internal(Throwable ex, String name, PrintWriter err, boolean verbose) {
    try {
      Throwable root = ex;
      while (root.getCause() != null && root.getCause() != root) root = root.getCause();
      String hint = verbose ? "" : " (rerun with --verbose for the stack trace)";
      if (root instanceof OutOfMemoryError)
        err.println(name + ": out of memory (" + oneLine(String.valueOf(root.getMessage()))
            + "); give Java more, e.g. ACTINDEX_JAVA_OPTS=-Xmx8g bin/actindex ..., or use smaller inputs");
      else if (root instanceof StackOverflowError)
        err.println(name + ": internal error: stack overflow (some input may be nested too deeply)" + hint);
      else err.println(name + ": internal error: " + oneLine(root.toString()) + hint);
      if (verbose) ex.printStackTrace(err);
      return ExitCodes.INTERNAL;
    } finally {
      err.flush();
    }
  }

  /**
   * The user-facing message if the failure is bad input (anywhere in the cause chain), else null. A
   * refused API parameter ({@link BadParameterException}) is named by the option of {@code command}
   * that carries it, when it has one; Java names the message writes in backquotes become options
   * ({@link ApiNames}).
   */
  static String refusal(Throwable ex, CommandLine.Model.CommandSpec command) {
    for (Throwable t = ex; t != null; t = t.getCause() == t ? null : t.getCause()) {
      if (t instanceof BadParameterException p && option(command, p.parameter()) != null)
        return option(command, p.parameter()) + ApiNames.options(p.rest());
      if (t instanceof BadInputException) return ApiNames.options(t.getMessage(), command);
      if (t instanceof NoSuchFileException f) return f.getFile() + ": no such file";
      if (t instanceof AccessDeniedException f) return f.getFile() + ": permission denied";
      if (t instanceof NotDirectoryException f) return f.getFile() + ": not a folder (a part of this path is a file)";
      if (t instanceof FileSystemException f && "Not a directory".equals(f.getReason()))
        return f.getFile() + ": not a folder (a part of this path is a file)";
    }
    // a full disk that no writer named: the file when the JDK says it, else the system's text
    String file = fileIn(ex);
    if (DiskFull.in(ex, file == null ? null : pathOrNull(file)))
      return DiskFull.refusal(file != null ? file : "writing an output", file != null ? "not written" : "not finished", ex).getMessage();
    return null;
  }

  /**
   * The option of {@code command} for an API parameter: {@code -k} for {@code k}, {@code --matrix-rows} for
   * {@code matrixRows}; null when the command has no such option (its value came from elsewhere, e.g. a
   * stored calibration).
   */
  static String option(CommandLine.Model.CommandSpec command, String parameter) {
    String name = ApiNames.option(parameter);
    return name != null && command != null && command.findOption(name) != null ? name : null;
  }

  /** The file a {@link FileSystemException} in the chain names, else null. */
  private static String fileIn(Throwable ex) {
    for (Throwable t = ex; t != null; t = t.getCause() == t ? null : t.getCause())
      if (t instanceof FileSystemException f && f.getFile() != null) return f.getFile();
    return null;
  }

  private static Path pathOrNull(String file) {
    try {
      return Path.of(file);
    } catch (InvalidPathException e) {
      return null;
    }
  }

  /** The message on one line: control characters escaped, cut at {@link #MAX_MESSAGE} characters. */
  static String oneLine(String message) {
    return Snippet.of(message, MAX_MESSAGE);
  }

  private static boolean verbose(ParseResult parsed) {
    for (ParseResult p = parsed; p != null; p = p.subcommand())
      if (p.hasMatchedOption("--verbose")) return true;
    return false;
  }
}
