package io.actindex.encode.io;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.encode.io.CsvMatrixReader.Header;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Arrays;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * CSV header decisions and encodings. The default header a data-frame library writes for unnamed
 * columns is the column numbers (pandas {@code DataFrame.to_csv}: {@code ,0,1,...} with the row
 * index, {@code 0,1,...} with {@code index=False}) — from memory of that library's behaviour.
 */
class CsvHeaderTest {
  @TempDir Path tmp;

  private Path csv(String name, String text) throws IOException {
    return Files.writeString(tmp.resolve(name), text, StandardCharsets.UTF_8);
  }

  private static double[] all(CsvMatrixReader r, int rows) throws IOException {
    double[] out = new double[(rows + 1) * r.cols()];
    int n = r.read(out, rows + 1);
    assertThat(n).isEqualTo(rows);
    return Arrays.copyOf(out, n * r.cols());
  }

  @Test
  void columnNumbersAreAHeaderAndRowsAreNotShifted() throws IOException {
    Path f = csv("nums.csv", "0,1,2\n5,6,7\n8,9,10\n");
    try (CsvMatrixReader r = CsvMatrixReader.open(f, Header.AUTO)) {
      assertThat(r.header()).containsExactly("0", "1", "2");
      assertThat(all(r, 2)).containsExactly(5, 6, 7, 8, 9, 10);
      assertThat(r.notes()).anySatisfy(n -> assertThat(n).contains("taken as the header").contains("column numbers"));
    }
    try (CsvMatrixReader r = CsvMatrixReader.open(f, Header.NO)) {
      assertThat(all(r, 3)).startsWith(0, 1, 2);
      assertThat(r.notes()).anySatisfy(n -> assertThat(n).contains("no header"));
    }
  }

  /**
   * With one or two columns, a first line {@code 0} or {@code 0,1} is as likely a row of 0/1 codes
   * (or counts) as pandas' header of unnamed columns; it was taken as the header, dropping the
   * first example and shifting every id by one with exit code 0. Now refused under AUTO; YES and
   * NO read it as told, and the same header over a row-index column is still a header.
   */
  @Test
  void columnNumbersOfOneOrTwoColumnsAreRefusedAsAmbiguous() throws IOException {
    for (String first : new String[] {"0", "0,1", " 0 , 1", "\"0\",\"1\""}) {
      int d = first.split(",").length;
      String row = d == 1 ? "1" : "1,1";
      Path f = csv("codes.csv", first + "\n" + row + "\n" + row + "\n");
      assertThatThrownBy(() -> CsvMatrixReader.open(f, Header.AUTO)).as(first).isInstanceOf(BadInputException.class)
          .hasMessageContaining("codes.csv").hasMessageContaining("line 1").hasMessageContaining("`header` yes")
          .hasMessageContaining("`header` no");
      try (CsvMatrixReader r = CsvMatrixReader.open(f, Header.NO)) {
        assertThat(all(r, 3)).hasSize(3 * d).startsWith(0);
      }
      try (CsvMatrixReader r = CsvMatrixReader.open(f, Header.YES)) {
        assertThat(all(r, 2)).containsOnly(1);
      }
    }
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("df.csv", ",0,1\n0,0.5,-1\n1,2,3\n"), Header.AUTO)) {
      assertThat(r.header()).containsExactly("", "0", "1");
    }
    for (String first : new String[] {"1", "1,0", "0,2"})
      try (CsvMatrixReader r = CsvMatrixReader.open(csv("data.csv", first + "\n" + first + "\n"), Header.AUTO)) {
        assertThat(r.header()).as(first).isNull();
      }
  }

  /**
   * One column of decimals saved with a decimal comma (golden formats/decimal_comma.csv; reference:
   * pandas 3.0 to_csv(sep=';', decimal=','), read back by its read_csv(decimal=',') as one column,
   * see tools/golden/make_formats.py) was read as two columns of whole numbers ("0,342" as 0 and
   * 342) with exit code 0. AUTO now refuses it at the end of the file, whatever the chunk size;
   * --header no reads it as told. Two whole numbers with a sign on the second, a decimal point,
   * a header line, a third column or quoted cells are what a comma-separated file holds, and are read.
   */
  @Test
  void oneColumnWrittenWithDecimalCommasIsRefusedNotReadAsTwoColumns() throws IOException {
    Path f = io.actindex.encode.Golden.path("formats/decimal_comma.csv");
    io.actindex.encode.Golden.Expected pandas = io.actindex.encode.Golden.expected("formats/decimal_comma");
    assertThat(pandas.cols()).isEqualTo(1);
    for (int chunk : new int[] {1, 4, 100}) {
      try (CsvMatrixReader r = CsvMatrixReader.open(f, Header.AUTO)) {
        double[] out = new double[chunk * r.cols()];
        assertThatThrownBy(() -> {
          while (r.read(out, chunk) > 0) {}
        }).as("chunk " + chunk).isInstanceOf(BadInputException.class).hasMessageContaining(f.toString())
            .hasMessageContaining("line 1: '0,342'").hasMessageContaining("decimal comma").hasMessageContaining("`header` no");
      }
    }
    try (CsvMatrixReader r = CsvMatrixReader.open(f, Header.NO)) {
      assertThat(all(r, pandas.rows())).startsWith(0, 342, -5, 103);
    }
    for (String ok : new String[] {"3,4\n1,-2\n", "3,4\n1,2.5\n", "a,b\n3,4\n1,2\n", "3,4,6\n1,2,3\n", "3,4\n1,2e0\n", "\"3\",\"4\"\n\"1\",\"2\"\n"})
      try (CsvMatrixReader r = CsvMatrixReader.open(csv("ok.csv", ok), Header.AUTO)) {
        assertThat(all(r, 2)).as(ok).hasSize(2 * r.cols());
      }
  }

  /**
   * A row limit ({@code --rows}) stops reading before the end of the file, where the decimal-comma
   * rule was checked alone: the golden file read 1 to 5 of its 6 rows at a time came back as two
   * columns. Closing the reader early now applies the rule to the rows read; rows read up to one
   * that breaks the pattern, {@code --header no}, or a refusal of another kind close quietly.
   */
  @Test
  void aReaderClosedBeforeTheEndRefusesDecimalCommaRowsReadSoFar() throws IOException {
    Path f = io.actindex.encode.Golden.path("formats/decimal_comma.csv");
    for (int stop = 1; stop < 6; stop++) {
      CsvMatrixReader r = CsvMatrixReader.open(f, Header.AUTO);
      assertThat(r.read(new double[stop * 2], stop)).isEqualTo(stop);
      assertThatThrownBy(r::close).as("stopped after " + stop).isInstanceOf(BadInputException.class).hasMessageContaining(f.toString())
          .hasMessageContaining("every row read (the first " + stop + ";").hasMessageContaining("line 1: '0,342'")
          .hasMessageContaining("decimal comma").hasMessageContaining("`header` no");
      r.close(); // refused once
    }
    try (CsvMatrixReader r = CsvMatrixReader.open(f, Header.NO)) {
      assertThat(r.read(new double[4], 2)).isEqualTo(2);
    }
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("signed.csv", "3,4\n1,-2\n5,6\n7,8\n"), Header.AUTO)) {
      assertThat(r.read(new double[4], 2)).as("a signed second number among the rows read: two columns").isEqualTo(2);
    }
    CsvMatrixReader wide = CsvMatrixReader.open(csv("wide.csv", "3,4\n1,2,3\n5,6\n"), Header.AUTO);
    assertThatThrownBy(() -> wide.read(new double[6], 3)).hasMessageContaining("too many fields");
    wide.close(); // the refusal above is the one reported
  }

  /** np.savetxt writes numbers apart by a space unless told otherwise (its default delimiter, from memory of NumPy's API). */
  @Test
  void numbersApartBySpacesTabsOrSemicolonsAreRefusedSayingSo() throws IOException {
    String[][] cases = {{"1.000000000000000000e+00 0.000000000000000000e+00\n2.5e+00 1e-03\n", "spaces"}, {"1\t2\n3\t4\n", "tabs"},
        {"1;2\n3;4\n", "semicolons"}};
    for (String[] c : cases) {
      Path f = csv("savetxt.csv", c[0]);
      assertThatThrownBy(() -> CsvMatrixReader.open(f, Header.NO).read(new double[4], 2)).as(c[1]).isInstanceOf(BadInputException.class)
          .hasMessageContaining("savetxt.csv").hasMessageContaining("line 1").hasMessageContaining("separated by " + c[1])
          .hasMessageContaining("delimiter=','");
    }
    assertThatThrownBy(() -> CsvMatrixReader.open(csv("word.csv", "1,two words\n"), Header.NO).read(new double[2], 1))
        .hasMessageContaining("is not a number").hasMessageNotContaining("delimiter");
    // one line of them is one text cell, a header with no row after it: refused saying both
    Path one = csv("one.csv", "0.1;0.2;0.3\n");
    assertThatThrownBy(() -> CsvMatrixReader.open(one, Header.AUTO)).isInstanceOf(BadInputException.class).hasMessageContaining("one.csv")
        .hasMessageContaining("a header but no rows").hasMessageContaining("separated by semicolons");
    assertThatThrownBy(() -> CsvMatrixReader.open(csv("names.csv", "a;b\n"), Header.AUTO)).hasMessageContaining("a header but no rows")
        .hasMessageNotContaining("semicolons");
    // read as one column, such a file carries the hint in its notes, for a caller's width check against a model
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("spaced.csv", "1.5 2 3\n4 5 6\n"), Header.NO)) {
      assertThat(r.cols()).isEqualTo(1);
      assertThat(r.notes()).anyMatch(n -> n.contains("hint: line 1 holds numbers separated by spaces") && n.contains("delimiter=','"));
    }
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("column.csv", "1.5\n2\n"), Header.NO)) {
      assertThat(r.notes()).as("one column of numbers: no hint").noneMatch(n -> n.contains("hint:"));
    }
  }

  /** np.savetxt(header=...) writes "# " before the header (its default comments, from memory of NumPy's API). */
  @Test
  void theCommentMarkOfNumpysHeaderIsNotPartOfTheFirstName() throws IOException {
    for (String first : new String[] {"# h0,h1", "#h0,h1", "h0,h1"})
      try (CsvMatrixReader r = CsvMatrixReader.open(csv("st.csv", first + "\n1,2\n"), Header.AUTO)) {
        assertThat(r.columnNames()).as(first).containsExactly("h0", "h1");
        assertThat(all(r, 1)).containsExactly(1, 2);
      }
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("q.csv", "\"#h0\",h1\n1,2\n"), Header.AUTO)) {
      assertThat(r.columnNames()).containsExactly("#h0", "h1"); // a quoted name is the name
    }
  }

  /** A data frame written with its label (scikit-learn's frames end with a 'target' column) gets a hint naming the column. */
  @Test
  void aColumnNamedLikeALabelGetsAHint() throws IOException {
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("frame.csv", "f0,f1,target\n0.5,1,0\n1,2,1\n"), Header.AUTO)) {
      assertThat(r.notes()).anySatisfy(n -> assertThat(n).contains("frame.csv: hint: column 2 is named 'target'"));
      assertThat(all(r, 2)).containsExactly(0.5, 1, 0, 1, 2, 1);
    }
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("plain.csv", "f0,f1,targets_seen\n0.5,1,0\n"), Header.AUTO)) {
      assertThat(r.notes()).noneSatisfy(n -> assertThat(n).contains("hint"));
    }
  }

  @Test
  void textHeaderNumbersAreDataYesSkipsANumericFirstLine() throws IOException {
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("t.csv", "a,b\n1,2\n"), Header.AUTO)) {
      assertThat(r.header()).containsExactly("a", "b");
      assertThat(all(r, 1)).containsExactly(1, 2);
    }
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("n.csv", "3,4.5\n1,2\n"), Header.AUTO)) {
      assertThat(r.header()).isNull();
      assertThat(all(r, 2)).containsExactly(3, 4.5, 1, 2);
      assertThat(r.notes()).anySatisfy(n -> assertThat(n).contains("no header line"));
    }
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("y.csv", "3,4\n1,2\n"), Header.YES)) {
      assertThat(all(r, 1)).containsExactly(1, 2);
    }
  }

  @Test
  void aFirstLineMixingNumbersAndTextIsRefusedNamingTheCell() throws IOException {
    // a typo in the first data row of a file without header
    Path f = csv("typo.csv", "1.5,2.O,3\n4,5,6\n");
    assertThatThrownBy(() -> CsvMatrixReader.open(f, Header.AUTO)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("typo.csv").hasMessageContaining("line 1, column 1").hasMessageContaining("'2.O'")
        .hasMessageContaining("`header` yes").hasMessageContaining("`header` no");
    assertThatThrownBy(() -> CsvMatrixReader.open(f, Header.NO).read(new double[6], 2)).hasMessageContaining("'2.O' is not a number");
  }

  /**
   * A header of numbered columns that do not start at 0 (1-based column numbers, wavelengths, time
   * offsets) was read as a row of data under AUTO: one example too many and every id shifted by
   * one, with exit code 0. Now refused; YES and NO read it as told.
   */
  @Test
  void evenlySpacedNumbersOnTheFirstLineAreRefusedUnderAuto() throws IOException {
    String[][] cases = { // first line, a data row, how the message shows the first line
        {"1,2,3,4,5,6", "0.5,-1.25,3,7,8,9", "1, 2, ..., 6"}, {"400,410,420", "0.5,-1.25,3", "400, 410, ..., 420"},
        {"0.1,0.2,0.3", "0.5,-1.25,3", "0.1, 0.2, ..., 0.3"}, {"6,5,4", "0.5,-1.25,3", "6, 5, ..., 4"},
        {"\"1\",\"2\",\"3\"", "0.5,-1.25,3", "1, 2, ..., 3"}, {"1e2,2e2,3e2", "0.5,-1.25,3", "1e2, 2e2, ..., 3e2"}};
    for (String[] c : cases) {
      Path f = csv("num-header.csv", c[0] + "\n" + c[1] + "\n");
      assertThatThrownBy(() -> CsvMatrixReader.open(f, Header.AUTO)).as(c[0]).isInstanceOf(BadInputException.class)
          .hasMessageContaining("num-header.csv").hasMessageContaining("line 1").hasMessageContaining(c[2])
          .hasMessageContaining("`header` yes").hasMessageContaining("`header` no");
      double[] row = Arrays.stream(c[1].split(",")).mapToDouble(Double::parseDouble).toArray();
      try (CsvMatrixReader r = CsvMatrixReader.open(f, Header.YES)) {
        assertThat(all(r, 1)).containsExactly(row);
      }
      try (CsvMatrixReader r = CsvMatrixReader.open(f, Header.NO)) {
        assertThat(all(r, 2)).endsWith(row).hasSize(2 * row.length);
      }
    }
    // not evenly spaced, two cells, a constant row, or a huge exponent: data, as before
    for (String first : new String[] {"1,2,4", "3,4", "0,0,0", "1e-999999999,1e999999999,2", "-0.5,0.25,2"})
      try (CsvMatrixReader r = CsvMatrixReader.open(csv("data.csv", first + "\n" + first + "\n"), Header.AUTO)) {
        assertThat(r.header()).as(first).isNull();
        assertThat(r.notes()).anySatisfy(n -> assertThat(n).contains("no header line"));
      }
  }

  @Test
  void aRowIndexColumnGetsAHint() throws IOException {
    // pandas to_csv with its default index: an empty first header cell over 0, 1, 2...
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("df.csv", ",0,1\n0,0.5,-1\n1,2,3\n2,4,5\n"), Header.AUTO)) {
      assertThat(r.header()).containsExactly("", "0", "1");
      assertThat(r.cols()).isEqualTo(3);
      assertThat(r.notes()).anySatisfy(n -> assertThat(n).contains("hint").contains("row index").contains("header cell ''").contains("values 0, 1"));
    }
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("idx.csv", "0,7,8\n1,7,8\n2,7,8\n"), Header.AUTO)) {
      assertThat(r.notes()).anySatisfy(n -> assertThat(n).contains("row index"));
    }
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("plain.csv", "5,7,8\n1,7,8\n2,7,8\n"), Header.AUTO)) {
      assertThat(r.notes()).noneSatisfy(n -> assertThat(n).contains("row index"));
    }
  }

  /**
   * RFC 4180 quoting: Python's {@code csv.writer} quotes a column name holding a comma or a quote
   * (and with {@code quoting=csv.QUOTE_ALL} every cell, numbers too); R's {@code write.csv} quotes
   * every name and row name ({@code "","V1"} over {@code "1",0.5}). The header was split at every
   * comma and a quoted number was "not a number", so such files were refused or misread.
   */
  @Test
  void quotedCellsAreReadAsRfc4180SaysNamesWithCommasStayOneColumn() throws IOException {
    // printed by: csv.writer(f).writerow(['h1,u0', 'say "x"', 'u2']); writerow([0.5, -1, 0.002])
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("names.csv", "\"h1,u0\",\"say \"\"x\"\"\",u2\r\n0.5,-1,0.002\r\n"), Header.AUTO)) {
      assertThat(r.cols()).isEqualTo(3);
      assertThat(r.header()).containsExactly("h1,u0", "say \"x\"", "u2");
      assertThat(all(r, 1)).containsExactly(0.5, -1, 0.002);
    }
    // the same with quoting=csv.QUOTE_ALL
    String all = "\"h1,u0\",\"say \"\"x\"\"\",\"u2\"\r\n\"0.5\",\"-1\",\"0.002\"\r\n\"1\",\"2\",\"3\"\r\n";
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("all.csv", all), Header.AUTO)) {
      assertThat(r.header()).containsExactly("h1,u0", "say \"x\"", "u2");
      assertThat(all(r, 2)).containsExactly(0.5, -1, 0.002, 1, 2, 3);
    }
    // a quoted first line of numbers is data, as unquoted
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("qnum.csv", "\"1\",\"2\"\n3,4\n"), Header.AUTO)) {
      assertThat(r.header()).isNull();
      assertThat(all(r, 2)).containsExactly(1, 2, 3, 4);
    }
    // R's write.csv with row names: an empty quoted header cell over quoted 1, 2, 3 gets the row-index hint
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("r.csv", "\"\",\"V1\",\"V2\"\n\"1\",0.5,-1\n\"2\",2,3\n\"3\",4,5\n"), Header.AUTO)) {
      assertThat(r.header()).containsExactly("", "V1", "V2");
      assertThat(all(r, 3)).containsExactly(1, 0.5, -1, 2, 2, 3, 3, 4, 5);
      assertThat(r.notes()).anySatisfy(n -> assertThat(n).contains("row index").contains("values 1, 2"));
    }
    // broken quoting is refused naming the file and line; a quoted cell is checked like any other
    for (String[] bad : new String[][] {{"open.csv", "a,b\n1,\"2\n", "line 2", "not closed"}, {"after.csv", "a,b\n1,\"2\"x\n", "line 2", "after a closing quote"},
        {"text.csv", "a,b\n1,\"x\"\n", "line 2", "'x' is not a number"}, {"empty.csv", "a,b\n1,\"\"\n", "line 2", "empty field"},
        {"wide.csv", "a,b\n1,\"2,3\"\n", "line 2", "'2,3' is not a number"}})
      assertThatThrownBy(() -> {
        try (CsvMatrixReader r = CsvMatrixReader.open(csv(bad[0], bad[1]), Header.AUTO)) {
          r.read(new double[8], 4);
        }
      }).as(bad[0]).isInstanceOf(BadInputException.class).hasMessageContaining(bad[0]).hasMessageContaining(bad[2]).hasMessageContaining(bad[3]);
  }

  @Test
  void utf16AndLatin1AreRefusedWithTheByteOffsetUtf8BomIsAccepted() throws IOException {
    Path bom16 = tmp.resolve("u16.csv");
    Files.write(bom16, "a,b\n1,2\n".getBytes(StandardCharsets.UTF_16)); // big-endian with a byte order mark
    assertThatThrownBy(() -> CsvMatrixReader.open(bom16)).isInstanceOf(BadInputException.class).hasMessageContaining("u16.csv")
        .hasMessageContaining("byte 0").hasMessageContaining("UTF-16");
    Path le = Files.write(tmp.resolve("le.csv"), "a,b\n1,2\n".getBytes(StandardCharsets.UTF_16LE));
    assertThatThrownBy(() -> CsvMatrixReader.open(le)).isInstanceOf(BadInputException.class).hasMessageContaining("byte 1 (line 1)")
        .hasMessageContaining("UTF-16");
    Path latin1 = Files.write(tmp.resolve("l1.csv"), "x,y\n1,2\ncaf\u00e9,3\n".getBytes(StandardCharsets.ISO_8859_1));
    assertThatThrownBy(() -> {
      try (CsvMatrixReader r = CsvMatrixReader.open(latin1)) {
        r.read(new double[8], 4);
      }
    }).isInstanceOf(BadInputException.class).hasMessageContaining("l1.csv").hasMessageContaining("byte 11 (line 3)").hasMessageContaining("UTF-8");
    byte[] bom8 = {(byte) 0xef, (byte) 0xbb, (byte) 0xbf};
    Path withBom = Files.write(tmp.resolve("bom.csv"), concat(bom8, "a,b\n1,2\n".getBytes(StandardCharsets.UTF_8)));
    try (CsvMatrixReader r = CsvMatrixReader.open(withBom)) {
      assertThat(r.header()).containsExactly("a", "b");
      assertThat(all(r, 1)).containsExactly(1, 2);
    }
  }

  /**
   * Lines that end in CR alone (classic Mac OS spreadsheets; Python's open(newline='\\r') writes
   * them too) are one line to this reader: "1\\r2\\r3" was refused as a header without rows, a
   * message about something else. CRLF line ends and a CR before the last newline stay fine.
   */
  @Test
  void linesEndingInCarriageReturnAloneAreRefusedSayingSo() throws IOException {
    for (String text : new String[] {"1\r2\r3\r", "a,b\r1,2\r3,4\r", "a,b\n1,2\r3,4\n"}) {
      Path f = csv("cr.csv", text);
      assertThatThrownBy(() -> {
        try (CsvMatrixReader r = CsvMatrixReader.open(f)) {
          r.read(new double[8], 4);
        }
      }).as(text).isInstanceOf(BadInputException.class).hasMessageContaining("cr.csv").hasMessageContaining("CR alone");
    }
    try (CsvMatrixReader r = CsvMatrixReader.open(csv("crlf.csv", "a,b\r\n1,2\r\n\r\n3,4\r\n"))) {
      assertThat(all(r, 2)).containsExactly(1, 2, 3, 4);
    }
  }

  @Test
  void messagesQuoteAShortEscapedPrefixOfABadCell() throws IOException {
    String big = "x".repeat(5_000_000);
    Path f = csv("big.csv", "a,b\n1,2\n3," + big + "\n");
    assertThatThrownBy(() -> {
      try (CsvMatrixReader r = CsvMatrixReader.open(f)) {
        r.read(new double[8], 4);
      }
    }).isInstanceOf(BadInputException.class).satisfies(e -> assertThat(e.getMessage()).hasSizeLessThan(300).contains("5,000,000 characters"));
    Path ctl = csv("ctl.csv", "a,b\n1,2\n3,a\u0001\u001b[31mred\u2028x\n");
    assertThatThrownBy(() -> {
      try (CsvMatrixReader r = CsvMatrixReader.open(ctl)) {
        r.read(new double[8], 4);
      }
    }).satisfies(e -> assertThat(e.getMessage()).contains("'a\\u0001\\u001b[31mred\\u2028x'").doesNotContain("\u0001").doesNotContain("\u001b"));
  }

  private static byte[] concat(byte[] a, byte[] b) {
    byte[] c = Arrays.copyOf(a, a.length + b.length);
    System.arraycopy(b, 0, c, a.length, b.length);
    return c;
  }
}
