package io.actindex.cli.format;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.PrintWriter;
import java.io.StringWriter;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

class CsvWriterTest {
  @Test
  void quotesAsRfc4180Section2Says() {
    // RFC 4180, section 2, rules 6 and 7: fields with line breaks, double quotes or commas are
    // enclosed in double quotes; a double quote inside is escaped by another double quote.
    assertThat(CsvWriter.field("aaa")).isEqualTo("aaa");
    assertThat(CsvWriter.field("b\nbb")).isEqualTo("\"b\nbb\"");
    assertThat(CsvWriter.field("b\"bb")).isEqualTo("\"b\"\"bb\"");
    assertThat(CsvWriter.field("a,b")).isEqualTo("\"a,b\"");
    assertThat(CsvWriter.field(" x")).isEqualTo("\" x\""); // common practice: keep edge spaces visible
    assertThat(CsvWriter.field(null)).isEmpty();
  }

  @Test
  void numbersAreWrittenAsInJson() {
    // one rule for JSON and CSV: a whole number without ".0", else the shortest text that reads back the same (Double.toString)
    for (double v : new double[] {27.0, -3.0, 0.0, 0.1, 2.3333333333333335, 1e-7, 1e15, 1.5e300, Double.MIN_VALUE}) {
      String text = CsvWriter.number(v);
      assertThat(text).as("%s", v).isEqualTo(JsonWriter.number(v));
      assertThat(Double.parseDouble(text)).as(text).isEqualTo(v);
    }
    assertThat(CsvWriter.number(27.0)).isEqualTo("27");
    assertThat(CsvWriter.number(-0.5)).isEqualTo("-0.5");
    assertThat(CsvWriter.number(Double.NaN)).isEmpty(); // null in JSON
    assertThat(CsvWriter.number(Double.POSITIVE_INFINITY)).isEmpty();
  }

  @Test
  void writesHeaderAndRows() {
    StringWriter sw = new StringWriter();
    PrintWriter pw = new PrintWriter(sw);
    CsvWriter csv = new CsvWriter(pw, List.of("rank", "key"));
    csv.row(Arrays.asList("1", "motor, left"));
    csv.row(Arrays.asList("2", null));
    pw.flush();
    assertThat(sw.toString().split("\\R")).containsExactly("rank,key", "1,\"motor, left\"", "2,");
  }

  @Test
  void listCellsUseOneSeparatorThatNeedsNoQuoting() {
    // the contract in docs/commands/README.md: items separated by ';', empty list = empty cell
    assertThat(CsvWriter.list(List.of("h1:3", "h2:0"))).isEqualTo("h1:3;h2:0");
    assertThat(CsvWriter.list(List.of("only"))).isEqualTo("only");
    assertThat(CsvWriter.list(List.of())).isEmpty();
    assertThat(CsvWriter.field(CsvWriter.list(List.of("a", "b", "c")))).as("not quoted").isEqualTo("a;b;c");
    Map<String, Integer> counts = new LinkedHashMap<>();
    counts.put("normal", 10);
    counts.put("a:b", 2); // a name with ':' still splits at the last one
    assertThat(CsvWriter.list(CsvWriter.counted(counts))).isEqualTo("normal:10;a:b:2");
    StringWriter sw = new StringWriter();
    PrintWriter pw = new PrintWriter(sw);
    new CsvWriter(pw, List.of("n", "keys")).row(List.of("2", CsvWriter.list(List.of("x", "y"))));
    pw.flush();
    assertThat(sw.toString().split("\\R")[1].split(",", -1)).containsExactly("2", "x;y");
  }
}
