package io.actindex.cli;

import java.nio.file.Path;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.Objects;
import java.util.stream.Collectors;
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

  /**
   * Refuses {@code option}, which is about CSV files, when typed while none of {@code files} (the
   * data files the command line reads; null entries are options not given) is one.
   */
  static void refuseUnlessCsv(CommandSpec spec, String option, Path... files) {
    if (!given(spec, option)) return;
    List<Path> read = Arrays.stream(files).filter(Objects::nonNull).toList();
    if (read.stream().anyMatch(f -> f.getFileName().toString().toLowerCase(Locale.ROOT).endsWith(".csv"))) return;
    String which = read.isEmpty() ? "this command line reads no data file" : read.size() == 1 ? read.getFirst() + " is not one"
        : "none of " + read.stream().map(Path::toString).collect(Collectors.joining(", ")) + " is one";
    throw new ParameterException(spec.commandLine(), option + " is about CSV files; " + which + " (.npy and .npz files and codes have no"
        + " header line)");
  }
}
