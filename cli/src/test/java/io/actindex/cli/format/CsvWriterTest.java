package io.actindex.cli.format;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.PrintWriter;
import java.io.StringWriter;
import java.util.Arrays;
import java.util.List;
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
  void writesHeaderAndRows() {
    StringWriter sw = new StringWriter();
    PrintWriter pw = new PrintWriter(sw);
    CsvWriter csv = new CsvWriter(pw, List.of("rank", "key"));
    csv.row(Arrays.asList("1", "motor, left"));
    csv.row(Arrays.asList("2", null));
    pw.flush();
    assertThat(sw.toString().split("\\R")).containsExactly("rank,key", "1,\"motor, left\"", "2,");
  }
}
