package io.actindex.cli;

import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.regex.Matcher;
import java.util.regex.Pattern;

/**
 * The library's messages name Java API parameters; the command line prints its options instead. A
 * refusal, note or warning of the library writes each parameter it mentions in backquotes, as the
 * Java API spells it ({@code `checkOverlap`}, {@code `Source.inputs`}, {@code `a.where`}), and
 * {@link #options(String)} turns each into the option: class names (parts that start with a capital)
 * left out, the other parts joined by {@code -}, camelCase written kebab-case, {@code --} before (one
 * letter: {@code -}). So {@code `checkOverlap`} is {@code --check-overlap}, {@code `Source.inputs`}
 * {@code --inputs}, {@code `a.where`} {@code --a-where}, {@code `k`} {@code -k}; the few spelled
 * otherwise on the command line are in {@link #SPELLED}. The leading parameter of a
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

  private static final Pattern TOKEN = Pattern.compile("`([^`\\s][^`]*)`");
  private static final Pattern NAME = Pattern.compile("[A-Za-z][A-Za-z0-9]*(\\.[A-Za-z][A-Za-z0-9]*)*");

  /** {@code text} with every backquoted Java name written as its option; other backquoted text is left as it is. */
  static String options(String text) {
    if (text == null || text.indexOf('`') < 0) return text;
    Matcher m = TOKEN.matcher(text);
    StringBuilder sb = new StringBuilder();
    while (m.find()) {
      String option = option(m.group(1));
      m.appendReplacement(sb, Matcher.quoteReplacement(option != null ? option : m.group()));
    }
    return m.appendTail(sb).toString();
  }

  /** Each of {@code texts} through {@link #options(String)}. */
  static List<String> options(List<String> texts) {
    return texts.stream().map(ApiNames::options).toList();
  }

  /** The option for a Java name ({@code matrixRows}: {@code --matrix-rows}), null when {@code name} is not one. */
  static String option(String name) {
    String spelled = SPELLED.get(name);
    if (spelled != null) return spelled;
    if (!NAME.matcher(name).matches()) return null;
    StringBuilder kebab = new StringBuilder();
    for (String part : name.split("\\.")) {
      if (Character.isUpperCase(part.charAt(0))) continue;
      if (!kebab.isEmpty()) kebab.append('-');
      kebab.append(part.replaceAll("([A-Z])", "-$1").toLowerCase(Locale.ROOT));
    }
    if (kebab.isEmpty()) return null;
    return (kebab.length() == 1 ? "-" : "--") + kebab;
  }
}
