package io.actindex.cli.format;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.io.PrintWriter;
import java.io.StringWriter;
import java.util.List;
import org.junit.jupiter.api.Test;

class TextTableTest {
  @Test
  void alignsColumnsAndNumbersRight() {
    TextTable t = new TextTable(List.of("rank", "key", "label"));
    t.row(List.of("1", "w-0001", "idle"));
    t.row(List.of("10", "w-2", "bearing\nwear"));
    StringWriter sw = new StringWriter();
    PrintWriter pw = new PrintWriter(sw);
    t.print(pw, "  ");
    pw.flush();
    assertThat(sw.toString().split("\\R")).containsExactly(
        "  rank  key     label",
        "  ----  ------  ------------",
        "     1  w-0001  idle",
        "    10  w-2     bearing wear");
  }

  @Test
  void rowWidthMustMatchHeader() {
    assertThatThrownBy(() -> new TextTable(List.of("a")).row(List.of("1", "2"))).isInstanceOf(IllegalArgumentException.class);
  }
}
