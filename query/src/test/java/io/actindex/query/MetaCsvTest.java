package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThatThrownBy;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.BadInputException;
import java.io.IOException;
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
    Path j = write("name,label,class\nx,a,b\n");
    assertThatThrownBy(() -> MetaCsv.read(new MetaCsv.Options(j, "name", "class", null))).hasMessageContaining("clashes");
    Path k = write("id,label\n1,a\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(k))).hasMessageContaining("'id' is reserved");
    Path l = write("");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(l))).hasMessageContaining("header");
  }
}
