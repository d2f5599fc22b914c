package io.actindex.cli;

/** The exit codes of every command (a stable contract for scripts). */
public final class ExitCodes {
  private ExitCodes() {}

  /** Success. */
  public static final int OK = 0;
  /** Internal error: a bug or an environment problem; rerun with --verbose for the stack trace. */
  public static final int INTERNAL = 1;
  /** Bad usage (unknown option, missing argument) or bad input (a file or value actindex refuses). */
  public static final int USAGE = 2;
}
