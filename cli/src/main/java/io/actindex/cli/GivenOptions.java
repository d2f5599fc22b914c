package io.actindex.cli;

import java.nio.file.Path;
import java.util.Locale;
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

  /** Refuses {@code option}, which is about CSV files, when typed with a source {@code file} that is not one. */
  static void refuseUnlessCsv(CommandSpec spec, String option, Path file) {
    if (given(spec, option) && !file.getFileName().toString().toLowerCase(Locale.ROOT).endsWith(".csv"))
      throw new ParameterException(spec.commandLine(), option + " is about CSV files; " + file + " is not one (.npy and .npz files"
          + " and codes have no header line)");
  }
}
