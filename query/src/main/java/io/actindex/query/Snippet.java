package io.actindex.query;

import io.actindex.core.BadInputException;

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

  /** {@code text} escaped, cut to {@code max} characters (then "... (N characters)"); see {@link BadInputException#snippet}. */
  public static String of(String text, int max) {
    return text == null ? "null" : BadInputException.snippet(text, max);
  }
}
