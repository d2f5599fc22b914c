package io.actindex.core;

/**
 * Input that actindex refuses: a malformed or damaged file, a wrong shape, a NaN, a layout that
 * does not match. The message names the file and the row, column or field at fault. The command
 * line maps it to exit code 2. A parameter the message mentions (a hint such as "use {@code `score`}
 * code") is written in backquotes as the Java API names it; the command line prints its option
 * there ({@code --score}). See {@link BadParameterException} for a refused value of one parameter.
 */
public class BadInputException extends RuntimeException {
  /** Characters of a bad value that {@link #quote} keeps. */
  public static final int QUOTE_CHARS = 40;

  public BadInputException(String message) {
    super(message);
  }

  public BadInputException(String message, Throwable cause) {
    super(message, cause);
  }

  /**
   * A name from the input (a layer, a member) as is when it is short printable ASCII without
   * commas, quotes or spaces, else {@link #quote}d.
   */
  public static String plain(String name) {
    boolean ok = name != null && !name.isEmpty() && name.length() <= QUOTE_CHARS
        && name.chars().allMatch(c -> c > 0x20 && c < 0x7f && c != ',' && c != '\'');
    return ok ? name : quote(name);
  }

  /**
   * A value from the input, fit for a one-line message: in single quotes, at most {@link
   * #QUOTE_CHARS} characters, escaped by {@link #snippet}.
   */
  public static String quote(CharSequence value) {
    return value == null ? "(none)" : "'" + snippet(value, QUOTE_CHARS) + "'";
  }

  /**
   * {@code text} for a one-line message: line breaks and tabs as {@code \n}, {@code \r}, {@code
   * \t}; other control characters, line and paragraph separators, invisible format characters
   * (a byte order mark, zero-width spaces, bidi controls) and unpaired surrogates as
   * {@code \u0000}-style escapes, so that a message never carries raw newlines or binary bytes;
   * cut after {@code max} characters (never inside a surrogate pair), then {@code ... (N
   * characters)}. The one escaping routine of the project's messages.
   */
  public static String snippet(CharSequence text, int max) {
    int n = Math.min(text.length(), max);
    if (n < text.length() && n > 0 && Character.isHighSurrogate(text.charAt(n - 1))) n--; // never cut a pair
    StringBuilder sb = new StringBuilder(n + 24);
    for (int i = 0; i < n; i++) {
      char c = text.charAt(i);
      switch (c) {
        case '\n' -> sb.append("\\n");
        case '\r' -> sb.append("\\r");
        case '\t' -> sb.append("\\t");
        default -> {
          boolean pairedHigh = Character.isHighSurrogate(c) && i + 1 < text.length() && Character.isLowSurrogate(text.charAt(i + 1));
          boolean pairedLow = Character.isLowSurrogate(c) && i > 0 && Character.isHighSurrogate(text.charAt(i - 1));
          int type = Character.getType(c);
          if (Character.isISOControl(c) || type == Character.LINE_SEPARATOR || type == Character.PARAGRAPH_SEPARATOR
              || type == Character.FORMAT // invisible: byte order mark, zero-width space, bidi controls
              || (Character.isSurrogate(c) && !pairedHigh && !pairedLow))
            sb.append(String.format("\\u%04x", (int) c));
          else sb.append(c);
        }
      }
    }
    if (n < text.length()) sb.append("... (").append(String.format(java.util.Locale.ROOT, "%,d", text.length())).append(" characters)");
    return sb.toString();
  }
}
