package io.actindex.core;

import java.util.Locale;
import java.util.Map;
import java.util.regex.Matcher;
import java.util.regex.Pattern;

/**
 * The rule by which a command line prints its option where a library message names a Java API
 * parameter (see {@link BadParameterException}): class names (parts that start with a capital) left
 * out, the other parts joined by {@code -}, camelCase written kebab-case, {@code --} before (one
 * letter: {@code -}). So {@code checkOverlap} is {@code --check-overlap}, {@code Source.inputs}
 * {@code --inputs}, {@code a.where} {@code --a-where}, {@code k} {@code -k}. Each command line
 * passes the names its options spell otherwise ({@code spelled}: {@code magnitudeBits} for {@code
 * --magnitudes}); {@code actindex} and {@code actindex-cluster} both print through here.
 */
public final class OptionNames {
  private OptionNames() {}

  private static final Pattern TOKEN = Pattern.compile("`([^`\\s][^`]*)`");
  private static final Pattern NAME = Pattern.compile("[A-Za-z][A-Za-z0-9]*(\\.[A-Za-z][A-Za-z0-9]*)*");

  /** {@code text} with every backquoted Java name written as its option; other backquoted text is left as it is. */
  public static String options(String text, Map<String, String> spelled) {
    if (text == null || text.indexOf('`') < 0) return text;
    Matcher m = TOKEN.matcher(text);
    StringBuilder sb = new StringBuilder();
    while (m.find()) {
      String option = option(m.group(1), spelled);
      m.appendReplacement(sb, Matcher.quoteReplacement(option != null ? option : m.group()));
    }
    return m.appendTail(sb).toString();
  }

  /** The option for a Java name ({@code matrixRows}: {@code --matrix-rows}), null when {@code name} is not one. */
  public static String option(String name, Map<String, String> spelled) {
    String given = spelled.get(name);
    if (given != null) return given;
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
