package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

/** The column names an index keeps, and the check of a later file's header against them. */
class SourceColumnsTest {
  @Test
  void namesSurviveTheIndexPropertyWhateverTheyHold() {
    List<String> names = List.of("mean radius", "a,b", "say \"hi\"", "back\\slash", "", "tab\there", "ünï", "0");
    Map<String, String> props = new HashMap<>();
    SourceColumns.put(props, names);
    assertThat(SourceColumns.of(props, "idx")).isEqualTo(names);
    Map<String, String> none = new HashMap<>();
    SourceColumns.put(none, null);
    assertThat(none).isEmpty();
    assertThat(SourceColumns.of(none, "idx")).isNull();
    // a header too long for the manifest's strings (1 MiB) is not recorded: the index must stay readable
    List<String> wide = new java.util.ArrayList<>();
    for (int i = 0; i < 40_000; i++) wide.add("activation_" + i);
    Map<String, String> big = new HashMap<>();
    SourceColumns.put(big, wide.subList(0, 1000));
    assertThat(big).containsKey(SourceColumns.PROPERTY);
    big.clear();
    SourceColumns.put(big, wide);
    assertThat(big).isEmpty();
    props.put(SourceColumns.PROPERTY, "[\"a\", 3]");
    assertThatThrownBy(() -> SourceColumns.of(props, "idx")).isInstanceOf(BadInputException.class).hasMessageContaining("idx");
  }

  @Test
  void onlyTheSameNamesInTheSameOrderPass() {
    List<String> built = List.of("h0", "h1", "h2");
    SourceColumns.check(built, "the build", List.of("h0", "h1", "h2"), "q.csv");
    SourceColumns.check(built, "the build", null, "q.csv"); // no header: read by position
    SourceColumns.check(null, "the build", List.of("x", "y", "z"), "q.csv"); // nothing recorded
    SourceColumns.check(built, "the build", List.of("h0", "h1"), "q.csv"); // another width: refused by the width check
    assertThatThrownBy(() -> SourceColumns.check(built, "the build", List.of("h0", "h2", "h1"), "q.csv"))
        .isInstanceOf(BadInputException.class).hasMessageContaining("q.csv: column 1 (0-based) is 'h2'").hasMessageContaining("another order");
    assertThatThrownBy(() -> SourceColumns.check(built, "the build", List.of("h0", "h1", "h1"), "q.csv"))
        .isInstanceOf(BadInputException.class).hasMessageContaining("column 2").hasMessageNotContaining("another order");
    assertThatThrownBy(() -> SourceColumns.check(built, "the build", List.of("h0", "h1", "H2"), "q.csv"))
        .isInstanceOf(BadInputException.class).hasMessageContaining("'H2' where the build has 'h2'");
  }

  @Test
  void columnNumbersAreNotCheckedAgainstNamesButTheirOrderIs() {
    // pandas writes 0, 1, ..., d-1 over the columns of DataFrame(array) and keeps them as labels (common practice)
    List<String> numbered = List.of("0", "1", "2");
    SourceColumns.check(List.of("h0", "h1", "h2"), "the build", numbered, "q.csv");
    SourceColumns.check(numbered, "sample A", List.of("h0", "h1", "h2"), "b.csv");
    assertThat(SourceColumns.numbered(numbered)).isTrue();
    assertThat(SourceColumns.numbered(List.of("0", "2", "1"))).isFalse();
    assertThatThrownBy(() -> SourceColumns.check(numbered, "the build", List.of("2", "1", "0"), "q.csv"))
        .isInstanceOf(BadInputException.class).hasMessageContaining("column 0").hasMessageContaining("another order");
    assertThatThrownBy(() -> SourceColumns.check(numbered, "the build", List.of("0", "1", "5"), "q.csv"))
        .isInstanceOf(BadInputException.class).hasMessageContaining("column 2");
    // a first row of data taken for a header (--header yes on a file without one) against numbers
    assertThatThrownBy(() -> SourceColumns.check(numbered, "the build", List.of("0.25", "-1.5e-3", "7"), "q.csv"))
        .isInstanceOf(BadInputException.class).hasMessageContaining("column 0");
    assertThatThrownBy(() -> SourceColumns.check(List.of("h0", "h1", "h2"), "the build", List.of("0", "2", "1"), "q.csv"))
        .isInstanceOf(BadInputException.class).hasMessageContaining("column 0");
  }
}
