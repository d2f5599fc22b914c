package io.actindex.query;

/**
 * A short, one-line rendering of user text for error messages: control characters (line breaks,
 * NUL, ...) become {@code \n}, {@code \t} or {@code \u0000}-style escapes and anything past
 * {@link #MAX} characters is cut, with the full length said, so a 5 MB cell or a 100,000-character
 * filter never turns into a 5 MB message.
 */
public final class Snippet {
  private Snippet() {}

  /** Characters of the original text quoted at most. */
  public static final int MAX = 60;

  /** {@code text} escaped, cut to {@link #MAX} characters. */
  public static String of(String text) {
    return of(text, MAX);
  }

  /** {@code text} escaped, cut to {@code max} characters (then "... (N characters)"). */
  public static String of(String text, int max) {
    if (text == null) return "null";
    int n = Math.min(text.length(), max);
    if (n < text.length() && n > 0 && Character.isHighSurrogate(text.charAt(n - 1))) n--; // do not split a pair
    StringBuilder b = new StringBuilder(n + 24);
    for (int i = 0; i < n; i++) {
      char c = text.charAt(i);
      switch (c) {
        case '\n' -> b.append("\\n");
        case '\r' -> b.append("\\r");
        case '\t' -> b.append("\\t");
        default -> {
          if (Character.isISOControl(c) || Character.getType(c) == Character.LINE_SEPARATOR
              || Character.getType(c) == Character.PARAGRAPH_SEPARATOR)
            b.append(String.format("\\u%04x", (int) c));
          else b.append(c);
        }
      }
    }
    if (n < text.length()) b.append("... (").append(String.format(java.util.Locale.ROOT, "%,d", text.length())).append(" characters)");
    return b.toString();
  }
}
