package io.actindex.core;

import static org.assertj.core.api.Assertions.assertThat;

import org.junit.jupiter.api.Test;

/** Values quoted into one-line messages: short, escaped, never raw control characters. */
class BadInputExceptionTest {
  @Test
  void quoteEscapesControlCharactersAndKeepsAShortPrefix() {
    assertThat(BadInputException.quote("abc")).isEqualTo("'abc'");
    assertThat(BadInputException.quote("a\nb\r\tc\u0000\u001b")).isEqualTo("'a\\nb\\r\\tc\\u0000\\u001b'");
    assertThat(BadInputException.quote("x".repeat(5_000_000))).isEqualTo("'" + "x".repeat(40) + "... (5,000,000 characters)'");
    assertThat(BadInputException.quote("caf\u00e9 \uD83D\uDE00")).isEqualTo("'caf\u00e9 \uD83D\uDE00'"); // printable text and a surrogate pair stay
    assertThat(BadInputException.quote("\uD800x\u0085\u2028\u2029")).isEqualTo("'\\ud800x\\u0085\\u2028\\u2029'");
    // invisible format characters (a byte order mark, zero-width space, bidi override, soft hyphen):
    // "key 'k5' is not in the index" while the key was "\uFEFFk5"
    assertThat(BadInputException.quote("\uFEFFk5\u200B\u202E\u00AD")).isEqualTo("'\\ufeffk5\\u200b\\u202e\\u00ad'");
    // a pair cut at the limit is dropped whole rather than split
    String cut = "y".repeat(39) + "\uD83D\uDE00z";
    assertThat(BadInputException.quote(cut)).isEqualTo("'" + "y".repeat(39) + "... (42 characters)'");
    assertThat(BadInputException.quote(null)).isEqualTo("(none)");
    assertThat(BadInputException.snippet("a\nb", 60)).isEqualTo("a\\nb");
  }

  @Test
  void plainNamesStayBareOthersAreQuoted() {
    assertThat(BadInputException.plain("net.0")).isEqualTo("net.0");
    assertThat(BadInputException.plain("a,b")).isEqualTo("'a,b'");
    assertThat(BadInputException.plain("a b")).isEqualTo("'a b'");
    assertThat(BadInputException.plain("")).isEqualTo("''");
  }
}
