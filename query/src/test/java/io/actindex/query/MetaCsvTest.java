package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThatThrownBy;
import static java.nio.charset.StandardCharsets.UTF_8;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.BadInputException;
import java.io.IOException;
import java.nio.charset.Charset;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class MetaCsvTest {
  @TempDir Path tmp;

  Path write(String text) throws IOException {
    Path f = tmp.resolve("meta.csv");
    Files.writeString(f, text);
    return f;
  }

  /** Quoting rules of RFC 4180 (Y. Shafranovich, "Common Format and MIME Type for CSV Files", 2005, section 2). */
  @Test
  void readsQuotedFieldsAndMapsRoles() throws IOException {
    Path f = write("name,class,part,note,score\r\n"
        + "a,cat,train,\"hello, world\",0.5\r\n"
        + "b,dog,test,\"say \"\"hi\"\"\",\r\n"
        + "c,,val,\"two\nlines\",3\n");
    List<Map<String, String>> rows = MetaCsv.read(new MetaCsv.Options(f, "name", "class", "part"));
    assertEquals(3, rows.size());
    assertEquals(Map.of("key", "a", "label", "cat", "split", "train", "note", "hello, world", "score", "0.5"), rows.get(0));
    assertEquals(Map.of("key", "b", "label", "dog", "split", "test", "note", "say \"hi\""), rows.get(1));
    assertEquals(Map.of("key", "c", "split", "val", "note", "two\nlines", "score", "3"), rows.get(2));
  }

  /** Column names come out in Unicode NFC, and a role column named in the other form is found (see encode's UnicodeNamesTest). */
  @Test
  void columnNamesAreNfcAndRoleColumnsMatchInEitherForm() throws IOException {
    String nfd = "cafe\u0301", nfc = "caf\u00e9";
    Path f = write("key," + nfd + ",cla\u0301se\nk1,1,a\n");
    assertEquals(Map.of("key", "k1", nfc, "1", "label", "a"), MetaCsv.read(new MetaCsv.Options(f, null, "cl\u00e1se", null)).getFirst());
  }

  @Test
  void defaultRoleColumnsByName() throws IOException {
    Path f = write("key,label,x\nk1,l1,1\nk2,l2,2\n");
    List<Map<String, String>> rows = MetaCsv.read(MetaCsv.Options.of(f));
    assertEquals(Map.of("key", "k2", "label", "l2", "x", "2"), rows.get(1));
  }

  @Test
  void badFilesNameTheFileAndLine() throws IOException {
    Path f = write("key,label\nk1,a\nk1,b\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(f))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("meta.csv").hasMessageContaining("line 3").hasMessageContaining("k1");
    Path g = write("key,label\nk1,a,extra\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(g))).hasMessageContaining("line 2").hasMessageContaining("3 fields");
    Path h = write("key,label\nk1,\"open\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(h))).hasMessageContaining("never closed");
    Path i = write("key,label\n");
    assertThatThrownBy(() -> MetaCsv.read(new MetaCsv.Options(i, "name", null, null))).hasMessageContaining("no column 'name'");
    // pandas' to_csv writes its row index under an empty header cell (from memory of that library)
    Path pandas = write(",key,label\n0,k1,a\n1,k2,b\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(pandas))).hasMessageContaining("column 1 has an empty name")
        .hasMessageContaining("index=False");
    Path j = write("name,label,class\nx,a,b\n");
    assertThatThrownBy(() -> MetaCsv.read(new MetaCsv.Options(j, "name", "class", null))).hasMessageContaining("clashes");
    Path k = write("id,label\n1,a\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(k))).hasMessageContaining("'id' is reserved");
    Path kind = write("key,kind.rpm\nk1,3\n"); // the store's own name for a column's kind: refused by the index without the file
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(kind))).hasMessageContaining("meta.csv").hasMessageContaining("'kind.rpm'");
    Path l = write("");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(l))).hasMessageContaining("header");
    // separated by semicolons, as pandas' to_csv(sep=';') and spreadsheets in European languages write it
    // (from memory): it was read as one field named 'key;label;split', keys row-N and no label, exit 0
    Path semi = write("key;label;split\nk0;cat;train\nk1;dog;test\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(semi))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("meta.csv").hasMessageContaining("line 1").hasMessageContaining("semicolons");
    Path tabs = write("key\tlabel\nk0\tcat\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(tabs))).hasMessageContaining("meta.csv").hasMessageContaining("tabs");
    assertEquals(List.of(Map.of("key", "k0", "note", "a;b")), MetaCsv.read(MetaCsv.Options.of(write("key,note\nk0,a;b\n")))); // a value may hold one
  }

  @Test
  void utf8ByteOrderMarkIsSkipped() throws IOException {
    Path f = tmp.resolve("bom.csv");
    Files.write(f, concat(new byte[] {(byte) 0xEF, (byte) 0xBB, (byte) 0xBF}, "key,label\nk1,caf\u00e9\n".getBytes(UTF_8)));
    assertEquals(List.of(Map.of("key", "k1", "label", "caf\u00e9")), MetaCsv.read(MetaCsv.Options.of(f)));
  }

  /** Text saved as UTF-16 (both byte orders, with and without a byte order mark) or Latin-1 is refused with the line. */
  @Test
  void otherEncodingsAreRefusedWithTheLine() throws IOException {
    String text = "key,label\nk1,caf\u00e9\nk2,na\u00efve\n";
    for (Charset cs : List.of(StandardCharsets.UTF_16, StandardCharsets.UTF_16LE, StandardCharsets.UTF_16BE)) {
      Path f = tmp.resolve("u16-" + cs.name() + ".csv");
      Files.write(f, text.getBytes(cs));
      assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(f))).isInstanceOf(BadInputException.class)
          .hasMessageContaining(f.getFileName().toString()).hasMessageContaining("line 1").hasMessageContaining("UTF-16")
          .hasMessageContaining("save it as UTF-8");
    }
    Path latin = tmp.resolve("latin1.csv");
    Files.write(latin, text.getBytes(StandardCharsets.ISO_8859_1));
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(latin))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("latin1.csv: line 2: not UTF-8 (byte 0xE9 after 'k1,caf')").hasMessageContaining("Latin-1");
  }

  @Test
  void limitsAreRefusedWithShortMessages() throws IOException {
    // columns: at the limit fine, one more refused
    String head = String.join(",", java.util.stream.IntStream.range(0, MetaCsv.MAX_COLUMNS).mapToObj(c -> "c" + c).toList());
    Path ok = write(head + "\n" + ",".repeat(MetaCsv.MAX_COLUMNS - 1) + "\n");
    assertEquals(1, MetaCsv.read(MetaCsv.Options.of(ok)).size());
    Path wide = write(head + ",extra\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(wide))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("meta.csv: line 1: more than " + MetaCsv.MAX_COLUMNS + " columns");
    // a cell: at the limit fine (quoted too), one character more refused, message short
    Path cell = write("key,note\nk1,\"" + "y".repeat(MetaCsv.MAX_CELL_CHARS) + "\"\n");
    assertEquals(MetaCsv.MAX_CELL_CHARS, MetaCsv.read(MetaCsv.Options.of(cell)).get(0).get("note").length());
    Path big = write("key,note\nk1,ok\nk2," + "z".repeat(5_000_000) + "\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(big))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("meta.csv: line 3 is longer than").message().hasSizeLessThan(300);
    Path bigCell = write("key,note\nk1,ok\nk2,\"" + "z\n".repeat(MetaCsv.MAX_CELL_CHARS) + "\"\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(bigCell))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("meta.csv: line 3, column 2: a cell longer than 10,000 characters, starting 'z\\nz\\n")
        .message().hasSizeLessThan(300).doesNotContain("\n");
    // a line of 200 MB would be refused after the first MiB; a 2 MiB one shows it
    Path line = write("key,note\n" + "k,".repeat(MetaCsv.MAX_LINE_BYTES) + "\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(line))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("line 2 is longer than 1,048,576 bytes");
  }

  private static byte[] concat(byte[] a, byte[] b) {
    byte[] out = java.util.Arrays.copyOf(a, a.length + b.length);
    System.arraycopy(b, 0, out, a.length, b.length);
    return out;
  }
}
