package io.actindex.cli;

import io.actindex.core.OptionNames;
import java.util.List;
import java.util.Map;
import java.util.regex.Pattern;
import picocli.CommandLine;

/**
 * The library's messages name Java API parameters; the command line prints its options instead. A
 * refusal, note or warning of the library writes each parameter it mentions in backquotes, as the
 * Java API spells it ({@code `checkOverlap`}, {@code `Source.inputs`}, {@code `a.where`}), and
 * {@link #options(String)} turns each into the option by {@link OptionNames}' rule ({@code
 * `checkOverlap`} is {@code --check-overlap}, {@code `Source.inputs`} {@code --inputs}, {@code `k`}
 * {@code -k}); the few spelled otherwise on the command line are in {@link #SPELLED}. The leading parameter of a
 * {@link io.actindex.core.BadParameterException} is mapped by the same rule ({@link #option(String)}).
 */
final class ApiNames {
  private ApiNames() {}

  /** Names whose option is not the rule's spelling (a value included where the option takes another word for it). */
  static final Map<String, String> SPELLED = Map.of(
      "magnitudeBits", "--magnitudes",
      "magnitudeBits 0", "--magnitudes off",
      "outputLayer false", "--no-output-layer",
      "BinarizeRule.MEDIAN", "--median",
      "BuildParams.dir", "--out",
      "keysFile", "--keys",
      "Refine.run", "nearest --refine",
      "OodScore.decide", "--decision-only");

  /** {@code text} with every backquoted Java name written as its option; other backquoted text is left as it is. */
  static String options(String text) {
    return OptionNames.options(text, SPELLED);
  }

  /**
   * {@link #options(String)} for a message of {@code command}: a command that takes the kind of its
   * rows as a value ({@code compare --kind inputs}, {@code report --compare-kind inputs}) rather than as options of their own ({@code
   * nearest --inputs}) gets {@code `Source.inputs`} (and the other kinds) as {@code --kind inputs}.
   */
  static String options(String text, CommandLine.Model.CommandSpec command) {
    if (text != null && command != null && command.findOption("--inputs") == null)
      for (String kind : List.of("--kind", "--compare-kind"))
        if (command.findOption(kind) != null) return options(KIND.matcher(text).replaceAll(kind + " $1"));
    return options(text);
  }

  private static final Pattern KIND = Pattern.compile("`Source\\.(inputs|activations|codes)`");

  /** Each of {@code texts} through {@link #options(String)}. */
  static List<String> options(List<String> texts) {
    return texts.stream().map(ApiNames::options).toList();
  }

  /** The option for a Java name ({@code matrixRows}: {@code --matrix-rows}), null when {@code name} is not one. */
  static String option(String name) {
    return OptionNames.option(name, SPELLED);
  }
}
