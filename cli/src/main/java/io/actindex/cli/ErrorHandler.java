package io.actindex.cli;

import io.actindex.core.BadInputException;
import java.io.PrintWriter;
import java.nio.file.AccessDeniedException;
import java.nio.file.NoSuchFileException;
import picocli.CommandLine;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.ParseResult;

/**
 * Maps failures to exit codes and one-line messages on stderr: bad usage and bad input exit 2
 * with the message (no stack trace); anything else is an internal error, exit 1, with a hint to
 * rerun with {@code --verbose}, which prints the stack trace.
 */
final class ErrorHandler implements CommandLine.IParameterExceptionHandler, CommandLine.IExecutionExceptionHandler {

  @Override
  public int handleParseException(ParameterException ex, String[] args) {
    CommandLine cl = ex.getCommandLine();
    PrintWriter err = cl.getErr();
    err.println(cl.getCommandSpec().qualifiedName() + ": " + ex.getMessage());
    err.println("Run '" + cl.getCommandSpec().qualifiedName() + " --help' for usage.");
    err.flush();
    return ExitCodes.USAGE;
  }

  @Override
  public int handleExecutionException(Exception ex, CommandLine cl, ParseResult parsed) {
    PrintWriter err = cl.getErr();
    String name = cl.getCommandSpec().qualifiedName();
    try {
      String refusal = refusal(ex);
      if (refusal != null) {
        err.println(name + ": " + refusal);
        if (verbose(parsed)) ex.printStackTrace(err);
        return ExitCodes.USAGE;
      }
      if (ex instanceof ParameterException pe) return handleParseException(pe, new String[0]);
      Throwable root = ex;
      while (root.getCause() != null && root.getCause() != root) root = root.getCause();
      err.println(name + ": internal error: " + root);
      if (verbose(parsed)) ex.printStackTrace(err);
      else err.println("Rerun with --verbose for the stack trace.");
      if (root instanceof OutOfMemoryError)
        err.println("More memory: set ACTINDEX_JAVA_OPTS=-Xmx8g (or more) before running bin/actindex.");
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
    }
    return null;
  }

  private static boolean verbose(ParseResult parsed) {
    for (ParseResult p = parsed; p != null; p = p.subcommand())
      if (p.hasMatchedOption("--verbose")) return true;
    return false;
  }
}
