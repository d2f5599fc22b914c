package io.actindex.cli;

import io.actindex.core.BadInputException;
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
    List<String> near = u.getSuggestions(); // most alike first
    String hint = near.isEmpty() ? "" : "; did you mean " + near.getFirst() + "?";
    String first = u.getUnmatched().getFirst();
    boolean command = !u.getCommandLine().getSubcommands().isEmpty() && !first.startsWith("-");
    return (command ? "unknown command '" + first + "'" : ex.getMessage()) + hint;
  }

  @Override
  public int handleExecutionException(Exception ex, CommandLine cl, ParseResult parsed) {
    PrintWriter err = cl.getErr();
    String name = cl.getCommandSpec().qualifiedName();
    String refusal = refusal(ex);
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

  /** The user-facing message if the failure is bad input (anywhere in the cause chain), else null. */
  static String refusal(Throwable ex) {
    for (Throwable t = ex; t != null; t = t.getCause() == t ? null : t.getCause()) {
      if (t instanceof BadInputException) return t.getMessage();
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
