package io.actindex.cli;

import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.ParameterException;

/**
 * The one rule of every option that takes a metadata filter ({@code --where}, compare's {@code
 * --a-where}/{@code --b-where}): an empty or blank expression, as an unset shell variable gives, is
 * refused (exit 2) before any work, never read as "every example"; leaving the option out is how to
 * say that. The index module's {@code Where} refuses it too, for library callers.
 */
final class EmptyFilter {
  private EmptyFilter() {}

  /** {@code --where EXPR} of a query command. */
  static void refuse(CommandSpec spec, String expr) {
    refuse(spec, "--where", expr, "leave --where out to use every example");
  }

  /** {@code option EXPR}, with what to do instead. */
  static void refuse(CommandSpec spec, String option, String expr, String instead) {
    if (expr != null && expr.isBlank())
      throw new ParameterException(spec.commandLine(), option + ": the expression is empty; " + instead);
  }
}
