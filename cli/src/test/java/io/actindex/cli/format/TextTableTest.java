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
  void listItemsAreQuotedOnlyWhenTheyWouldSplitTheList() {
    assertThat(TextTable.item("dog")).isEqualTo("dog");
    assertThat(TextTable.item("w-0001_b.2")).isEqualTo("w-0001_b.2");
    assertThat(TextTable.item("big cat")).isEqualTo("\"big cat\"");
    assertThat(TextTable.item("bird, small")).isEqualTo("\"bird, small\"");
    assertThat(TextTable.item("a:b")).isEqualTo("\"a:b\"");
    assertThat(TextTable.item("tab\there")).isEqualTo("\"tab\there\"");
    assertThat(TextTable.item("no\u00a0break")).isEqualTo("\"no\u00a0break\"");
    assertThat(TextTable.item("x \"q\"")).isEqualTo("\"x \"\"q\"\"\"");
    assertThat(TextTable.item("say\"")).isEqualTo("\"say\"\"\"");
  }

  /**
   * Cells come from metadata files: a label holding ESC [31m turned the terminal red, a backspace
   * hid characters, a vertical tab or line separator broke the row. Control characters (other than
   * the line breaks and tabs shown as spaces) and line or paragraph separators are printed escaped,
   * in cells and in the header alike.
   */
  @Test
  void controlCharactersInCellsAreEscapedNotSentToTheTerminal() {
    TextTable t = new TextTable(List.of("key", "no\u001bte"));
    t.row(List.of("k\u0008\u0008x", "l\u001b[31mred\u000bnext\u2028line\u0007"));
    StringWriter sw = new StringWriter();
    PrintWriter pw = new PrintWriter(sw);
    t.print(pw, "");
    pw.flush();
    String out = sw.toString();
    assertThat(out.split("\n")).hasSize(3);
    assertThat(out).contains("k\\u0008\\u0008x", "l\\u001b[31mred\\u000bnext\\u2028line\\u0007", "no\\u001bte")
        .doesNotContain("\u001b").doesNotContain("\u0008").doesNotContain("\u000b").doesNotContain("\u2028").doesNotContain("\u0007");
  }

  @Test
  void rowWidthMustMatchHeader() {
    assertThatThrownBy(() -> new TextTable(List.of("a")).row(List.of("1", "2"))).isInstanceOf(IllegalArgumentException.class);
  }
}
