package io.actindex.core;

/**
 * Input that actindex refuses: a malformed or damaged file, a wrong shape, a NaN, a layout that
 * does not match. The message names the file and the row, column or field at fault. The command
 * line maps it to exit code 2.
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
   * #QUOTE_CHARS} characters (then {@code ...} and the full length), with line breaks, other
   * control characters, unpaired surrogates and the quote itself escaped ({@code \n}, {@code
   * \x00}, {@code \u00d8}...), so that a message never carries raw newlines or binary bytes.
   */
  public static String quote(CharSequence value) {
    if (value == null) return "(none)";
    StringBuilder sb = new StringBuilder("'");
    int n = Math.min(value.length(), QUOTE_CHARS);
    if (n < value.length() && Character.isHighSurrogate(value.charAt(n - 1))) n--; // never cut a pair
    for (int i = 0; i < n; i++) {
      char c = value.charAt(i);
      switch (c) {
        case '\n' -> sb.append("\\n");
        case '\r' -> sb.append("\\r");
        case '\t' -> sb.append("\\t");
        case '\'' -> sb.append("\\'");
        case '\\' -> sb.append("\\\\");
        default -> {
          boolean pairedHigh = Character.isHighSurrogate(c) && i + 1 < value.length() && Character.isLowSurrogate(value.charAt(i + 1));
          boolean pairedLow = Character.isLowSurrogate(c) && i > 0 && Character.isHighSurrogate(value.charAt(i - 1));
          if (c < 0x20 || c == 0x7f) sb.append(String.format("\\x%02x", (int) c));
          else if (Character.isISOControl(c) || c == '\ufffd' || c == '\u2028' || c == '\u2029'
              || (Character.isSurrogate(c) && !pairedHigh && !pairedLow))
            sb.append(String.format("\\u%04x", (int) c));
          else sb.append(c);
        }
      }
    }
    sb.append('\'');
    if (value.length() > n) sb.append("... (").append(value.length()).append(" characters)");
    return sb.toString();
  }
}
