package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;

import java.util.List;
import java.util.Map;
import java.util.Set;
import org.junit.jupiter.api.Test;

class LabelSpellingsTest {
  private static List<Map<String, String>> rows(String... labels) {
    return java.util.Arrays.stream(labels).map(l -> l == null ? Map.<String, String>of() : Map.of("label", l)).toList();
  }

  @Test
  void numbersAreWrittenWithoutTrailingZeros() {
    assertThat(LabelSpellings.number("3")).isEqualTo("3");
    assertThat(LabelSpellings.number("3.0")).isEqualTo("3");
    assertThat(LabelSpellings.number("2.50")).isEqualTo("2.5");
    assertThat(LabelSpellings.number("-1.00")).isEqualTo("-1");
    assertThat(LabelSpellings.number("1e1")).isEqualTo("10");
    assertThat(LabelSpellings.number("cat")).isNull();
    assertThat(LabelSpellings.number("3a")).isNull();
    assertThat(LabelSpellings.number("")).isNull();
    assertThat(LabelSpellings.number(null)).isNull();
  }

  @Test
  void aNumberWrittenTwoWaysInOneFileIsNoted() {
    String note = LabelSpellings.note("m.csv", rows("1", "cat", null, "3", "1.0"), null);
    assertThat(note).startsWith("m.csv: note: label '1.0' and '1' earlier in the file are the same number written two ways");
    assertThat(LabelSpellings.note("m.csv", rows("1", "2", "1", "cat", "Cat", "01x"), null)).isNull();
  }

  @Test
  void aBatchWritingTheIndexsNumbersAnotherWayIsNoted() {
    Set<String> index = Set.of("0", "1", "2");
    assertThat(LabelSpellings.note("b.csv", rows("1.0", "2.0"), index::contains))
        .startsWith("b.csv: note: label '1.0' and '1' in the index are the same number");
    assertThat(LabelSpellings.note("b.csv", rows("1", "2"), Set.of("1.0")::contains))
        .startsWith("b.csv: note: label '1' and '1.0' in the index are the same number");
    assertThat(LabelSpellings.note("b.csv", rows("1", "2", "5"), index::contains)).isNull();
  }
}
