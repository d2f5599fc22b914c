package io.actindex.cli;

import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.ParameterException;

/**
 * The rule for options that apply in some modes of a command only: one typed on the command line
 * where it cannot apply is refused (exit 2, the message names it and says why), never silently
 * ignored. Options left at their defaults are not "given", so a default never causes a refusal.
 */
final class GivenOptions {
  private GivenOptions() {}

  /** Whether {@code option} was typed on the command line of {@code spec}'s command. */
  static boolean given(CommandSpec spec, String option) {
    return spec.commandLine().getParseResult().hasMatchedOption(option);
  }

  /** Refuses each of {@code options} that was typed, as "OPTION WHY". */
  static void refuse(CommandSpec spec, String why, String... options) {
    for (String option : options)
      if (given(spec, option)) throw new ParameterException(spec.commandLine(), option + " " + why);
  }
}
