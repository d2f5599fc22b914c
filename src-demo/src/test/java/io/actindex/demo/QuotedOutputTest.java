package io.actindex.demo;

import static org.assertj.core.api.Assertions.assertThat;

import org.junit.jupiter.api.Test;

class QuotedOutputTest {
  static final String TABLE = """
      query row 82  vote: normal (3 of 6, agreement 50%) over 6 neighbours
        rank  distance   0  2  key      label
        ----  --------  --  -  -------  ---------
           1        30  21  9  w-05613  normal
           2        33  27  6  w-04458  imbalance
      """;

  @Test
  void aTableMayBeReWrappedAndRealignedButNotChanged() {
    assertThat(QuotedOutput.mismatch("rank distance 0 2 key label\n---- -------- -- - ------- ---------\n"
        + "1 30 21 9 w-05613 normal\n2   33 27 6 w-04458 imbalance", TABLE)).isNull();
    assertThat(QuotedOutput.mismatch("1 30 21 9 w-05613 normal 2 33 27 6 w-04458 imbalance", TABLE)).isNull();
    assertThat(QuotedOutput.mismatch("1 30 21 9 w-05613 normal 2 34 27 6 w-04458 imbalance", TABLE))
        .contains("quoted '34', printed '33'");
    assertThat(QuotedOutput.mismatch("2 33 27 6 w-04458 imbalance 1 30 21 9 w-05613 normal", TABLE)).isNotNull();
    assertThat(QuotedOutput.mismatch("vote: normal (3 of 6, agreement 60%)", TABLE)).contains("quoted '60'");
    assertThat(QuotedOutput.mismatch("w-05614", TABLE)).startsWith("not printed: w-05614");
  }

  @Test
  void anEllipsisLeavesOutTokensInOrder() {
    assertThat(QuotedOutput.mismatch("query row 82 ... w-05613 normal ... imbalance", TABLE)).isNull();
    assertThat(QuotedOutput.mismatch("w-05613 ... query row 82", TABLE)).isNotNull();
    String json = "{\"a\":{\"source\":\"where line = L1\",\"rows\":6581},\"notes\":[\"no floats for A (give --a-floats, or files)\"]}";
    assertThat(QuotedOutput.mismatch("{\"a\":{\"source\":\"where ...\", ...},\n \"notes\":[\"no floats for A (...)\"]}", json)).isNull();
    assertThat(QuotedOutput.mismatch("{\"a\":{\"source\":\"where ...\",\"rows\":6582}", json)).isNotNull();
    assertThat(QuotedOutput.mismatch("\"notes\":[\"no floats for B (...)\"]", json)).isNotNull();
  }

  @Test
  void aNumberWithAFractionMatchesThePrintedNumberRoundedToItsDigits() {
    assertThat(QuotedOutput.same("0.02461", "0.024606031781506665")).isTrue();
    assertThat(QuotedOutput.same("0.0246", "0.024606031781506665")).isTrue();
    assertThat(QuotedOutput.same("0.02460", "0.024606031781506665")).isFalse();
    assertThat(QuotedOutput.same("0.0009990", "0.000999000999000999")).isTrue();
    assertThat(QuotedOutput.same("1.12e-12", "1.120110764160561E-12")).isTrue();
    assertThat(QuotedOutput.same("1.13e-12", "1.120110764160561E-12")).isFalse();
    assertThat(QuotedOutput.same("-36.2", "-36.20402260073694")).isTrue();
    assertThat(QuotedOutput.same("36.2", "-36.20402260073694")).isFalse();
    assertThat(QuotedOutput.same("0.5", "0.5")).isTrue();
    assertThat(QuotedOutput.same("0.0", "0.04")).isTrue();
    assertThat(QuotedOutput.same("0.0", "0.06")).isFalse();
    // a whole number is compared as written
    assertThat(QuotedOutput.same("33", "33")).isTrue();
    assertThat(QuotedOutput.same("33", "33.4")).isFalse();
    assertThat(QuotedOutput.same("6581", "6582")).isFalse();
    assertThat(QuotedOutput.same("0.5", "normal")).isFalse();
  }

  @Test
  void tokensSplitJsonStringsNumbersAndPunctuation() {
    assertThat(QuotedOutput.tokens("{\"k\":2,\"x\":\"a, b\"} w-05613 0:124 -3.4e-05 50%) --ties ..."))
        .containsExactly("{", "\"k\"", ":", "2", ",", "\"x\"", ":", "\"a, b\"", "}", "w-05613", "0", ":", "124",
            "-3.4e-05", "50", "%", ")", "--ties", "...");
  }
}
