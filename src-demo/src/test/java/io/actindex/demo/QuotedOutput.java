package io.actindex.demo;

import java.math.BigDecimal;
import java.math.MathContext;
import java.math.RoundingMode;
import java.util.ArrayList;
import java.util.List;
import java.util.regex.Matcher;
import java.util.regex.Pattern;

/**
 * Whether an output quoted in the docs is still what a command prints.
 *
 * <p>Both texts are cut into tokens: JSON strings (quotes included), numbers, one of {@code
 * {}[](),:;} and runs of other characters; whitespace and line breaks only separate tokens, so a
 * quote may re-wrap a line or re-align a table. The quote's tokens must appear in the output in
 * order and next to each other, except where the quote writes {@code ...}: there any number of
 * output tokens may be left out (inside a JSON string, any part of the string). A number quoted
 * with a fraction or an exponent matches the printed number rounded to the quote's significant
 * digits ({@code 0.02461} for {@code 0.024606031781506665}); a whole number must be printed as it
 * is quoted.
 */
final class QuotedOutput {
  private QuotedOutput() {}

  private static final String ELLIPSIS = "...";
  private static final Pattern NUMBER = Pattern.compile("-?\\d+(?:\\.\\d+)?(?:[eE][-+]?\\d+)?");
  private static final String PUNCTUATION = "{}[](),:;";

  /** Null when {@code quoted} is found in {@code printed}, else what differs, in one paragraph. */
  static String mismatch(String quoted, String printed) {
    List<String> want = tokens(quoted), have = tokens(printed);
    int from = 0;
    int start = 0;
    while (start < want.size()) {
      if (want.get(start).equals(ELLIPSIS)) {
        start++;
        continue;
      }
      int end = start;
      while (end < want.size() && !want.get(end).equals(ELLIPSIS)) end++;
      List<String> part = want.subList(start, end);
      int at = find(part, have, from);
      if (at < 0) return explain(part, have, from);
      from = at + part.size();
      start = end;
    }
    return null;
  }

  /** The first place at or after {@code from} where {@code part} matches token by token, or -1. */
  private static int find(List<String> part, List<String> have, int from) {
    for (int at = from; at + part.size() <= have.size(); at++) {
      if (matched(part, have, at) == part.size()) return at;
    }
    return -1;
  }

  /** How many leading tokens of {@code part} match the output from {@code at}. */
  private static int matched(List<String> part, List<String> have, int at) {
    int n = 0;
    while (n < part.size() && at + n < have.size() && same(part.get(n), have.get(at + n))) n++;
    return n;
  }

  /** Names the quoted token where the best partial match broke off, with the output there. */
  private static String explain(List<String> part, List<String> have, int from) {
    int bestAt = -1, best = 0;
    for (int at = from; at < have.size(); at++) {
      int n = matched(part, have, at);
      if (n > best) {
        best = n;
        bestAt = at;
      }
    }
    if (bestAt < 0) return "not printed: " + String.join(" ", part.subList(0, Math.min(12, part.size())));
    int stop = Math.min(best + 8, part.size());
    int shown = Math.min(bestAt + stop, have.size());
    return "quoted: " + String.join(" ", part.subList(Math.max(0, best - 6), stop)) + "\n  printed: "
        + String.join(" ", have.subList(Math.max(from, bestAt + best - 6), shown)) + "\n  (first difference: quoted '"
        + part.get(best) + "', printed '" + (bestAt + best < have.size() ? have.get(bestAt + best) : "(end)") + "')";
  }

  static boolean same(String quoted, String printed) {
    if (quoted.equals(printed)) return true;
    if (quoted.length() > 1 && quoted.startsWith("\"") && quoted.endsWith("\"") && quoted.contains(ELLIPSIS)) {
      StringBuilder regex = new StringBuilder();
      String[] pieces = quoted.split(Pattern.quote(ELLIPSIS), -1);
      for (int i = 0; i < pieces.length; i++) {
        if (i > 0) regex.append(".*");
        regex.append(Pattern.quote(pieces[i]));
      }
      return printed.matches(regex.toString());
    }
    boolean rounded = quoted.contains(".") || quoted.contains("e") || quoted.contains("E");
    if (!rounded || !NUMBER.matcher(quoted).matches() || !NUMBER.matcher(printed).matches()) return false;
    BigDecimal q = new BigDecimal(quoted), p = new BigDecimal(printed);
    if (q.signum() == 0) return p.signum() == 0 || p.abs().compareTo(q.ulp().divide(BigDecimal.TWO)) < 0;
    for (RoundingMode mode : new RoundingMode[] {RoundingMode.HALF_UP, RoundingMode.HALF_EVEN}) {
      if (p.round(new MathContext(q.precision(), mode)).compareTo(q) == 0) return true;
    }
    return false;
  }

  static List<String> tokens(String text) {
    List<String> out = new ArrayList<>();
    Matcher number = NUMBER.matcher(text);
    int i = 0, n = text.length();
    while (i < n) {
      char c = text.charAt(i);
      if (Character.isWhitespace(c)) {
        i++;
      } else if (c == '"' && closingQuote(text, i) > 0) {
        int end = closingQuote(text, i);
        out.add(text.substring(i, end + 1));
        i = end + 1;
      } else if (PUNCTUATION.indexOf(c) >= 0) {
        out.add(String.valueOf(c));
        i++;
      } else if (number.region(i, n).lookingAt()) {
        out.add(number.group());
        i = number.end();
      } else {
        int end = i + 1;
        while (end < n && !Character.isWhitespace(text.charAt(end)) && PUNCTUATION.indexOf(text.charAt(end)) < 0
            && text.charAt(end) != '"') end++;
        out.add(text.substring(i, end));
        i = end;
      }
    }
    return out;
  }

  /** The index of the quote that closes a JSON string opened at {@code open} on its line, or -1. */
  private static int closingQuote(String text, int open) {
    for (int i = open + 1; i < text.length(); i++) {
      char c = text.charAt(i);
      if (c == '\\') i++;
      else if (c == '"') return i;
      else if (c == '\n') return -1;
    }
    return -1;
  }
}
