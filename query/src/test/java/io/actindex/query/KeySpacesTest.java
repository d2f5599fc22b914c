package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.index.meta.Where;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The spaces around a key are not part of it, wherever a key comes from a user's file or command
 * line. A metadata CSV written {@code key, label} (a space after each comma, as many writers do)
 * gave key {@code lead} for the cell {@code ' lead'}, but {@code delete --keys} refused the line
 * {@code ' lead'}, and a quoted {@code "  q "} kept its spaces; {@code --where key = ' lead'}
 * matched nothing.
 */
class KeySpacesTest {
  @TempDir Path tmp;

  private Path build(String name) {
    Path dir = tmp.resolve(name);
    Path acts = TestFiles.csv(tmp.resolve("acts.csv"), "a,b\n1,0\n0,1\n1,1\n0,0\n");
    Path meta = TestFiles.csv(tmp.resolve("meta.csv"), "key, label\n lead, x\n\"  q \", y\nc ,z\n\t d,w\n");
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(acts), MetaCsv.Options.of(meta)), Progress.NONE);
    return dir;
  }

  private static List<String> keys(Path dir) {
    try (IndexReader r = IndexReader.open(dir)) {
      return Arrays.stream(r.liveIds().toArray()).mapToObj(id -> r.meta().document(id).get("key")).toList();
    }
  }

  @Test
  void keysLoseTheirSurroundingSpacesInTheCsvTheKeysFileAndWhere() {
    assertThat(keys(build("idx"))).containsExactly("lead", "q", "c", "d");
    List<String> lines = List.of(" lead", "lead", "lead  ", "\tlead\r");
    for (int i = 0; i < lines.size(); i++) {
      String line = lines.get(i);
      Path dir = build("del-" + i);
      Delete.Result d = Delete.run(new Delete.Params(dir, TestFiles.csv(tmp.resolve("keys.txt"), line + "\n"), null));
      assertThat(d.deleted()).as("'%s'", line).isEqualTo(1);
      assertThat(keys(dir)).as("'%s'", line).containsExactly("q", "c", "d");
    }
    Path dir = build("where");
    try (IndexReader r = IndexReader.open(dir)) {
      assertThat(Where.select(r.meta(), "key = ' q '").toArray()).containsExactly(1);
      assertThat(Where.select(r.meta(), "key in (' lead', 'c ', zz)").toArray()).containsExactly(0, 2);
      assertThat(Where.select(r.meta(), "key != ' lead'").toArray()).containsExactly(1, 2, 3);
      assertThat(r.meta().idOfKey(" d ")).isEqualTo(3);
    }
    // add: a key that is in the index once its spaces are gone is refused as taken
    Path acts = TestFiles.csv(tmp.resolve("more.csv"), "a,b\n1,0\n");
    Path meta = TestFiles.csv(tmp.resolve("more-meta.csv"), "key,label\n\" c\",v\n");
    assertThatThrownBy(() -> IndexBuilder.add(new IndexBuilder.AddParams(dir, Source.activations(acts), MetaCsv.Options.of(meta), 4096), Progress.NONE))
        .isInstanceOf(BadInputException.class).hasMessageContaining("more-meta.csv").hasMessageContaining("key 'c' is already in the index");
    // two cells that differ only by those spaces are one key, twice
    Path twice = TestFiles.csv(tmp.resolve("twice.csv"), "key,label\nk1,a\n\"k1 \",b\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(twice))).hasMessageContaining("line 3: key 'k1' already used on line 2");
    Path blank = TestFiles.csv(tmp.resolve("blank.csv"), "key,label\n\"  \",a\n");
    assertThatThrownBy(() -> MetaCsv.read(MetaCsv.Options.of(blank))).hasMessageContaining("line 2: empty key");
  }

  /**
   * A key stored with spaces around it (a library caller's, or an index built before keys lost them)
   * is that key without them: add refused {@code a} beside a stored {@code ' a'} only when the new key
   * was written {@code ' a'} too, since the look-up tried the stored text and not what it means.
   */
  @Test
  void aKeyStoredWithSpacesIsFoundByTheKeyWithout() {
    Path dir = build("stored");
    try (IndexWriter w = IndexWriter.open(dir)) {
      CodeLayout layout;
      long[] words;
      try (IndexReader r = IndexReader.open(dir)) {
        layout = r.layout();
        words = r.code(0);
      }
      w.add(new CodeBlock(layout, 1, words), List.of(new java.util.HashMap<>(java.util.Map.of("key", " a\t", "label", "x"))));
      w.add(new CodeBlock(layout, 1, words), List.of(new java.util.HashMap<>(java.util.Map.of("key", "b ", "label", "x"))));
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertThat(r.meta().document(4).get("key")).isEqualTo(" a\t"); // stored as the caller wrote it
      assertThat(r.meta().idOfKey("a")).isEqualTo(4);
      assertThat(r.meta().idOfKey(" a ")).isEqualTo(4);
      assertThat(r.meta().idOfKey("b")).isEqualTo(5);
      assertThat(r.meta().idOfKey("ab")).isEqualTo(-1);
    }
    Path acts = TestFiles.csv(tmp.resolve("more.csv"), "a,b\n1,0\n");
    for (String cell : List.of("a", "\" a\"", "b")) {
      Path meta = TestFiles.csv(tmp.resolve("more-meta.csv"), "key,label\n" + cell + ",v\n");
      assertThatThrownBy(() -> IndexBuilder.add(new IndexBuilder.AddParams(dir, Source.activations(acts), MetaCsv.Options.of(meta), 4096), Progress.NONE))
          .as(cell).isInstanceOf(BadInputException.class).hasMessageContaining("is already in the index");
    }
    Delete.Result d = Delete.run(new Delete.Params(dir, TestFiles.csv(tmp.resolve("keys.txt"), "a\n"), null));
    assertThat(d.deleted()).isEqualTo(1);
    try (IndexReader r = IndexReader.open(dir)) {
      assertThat(r.meta().idOfKey("a")).isEqualTo(-1); // deleted: no longer found
      assertThat(r.meta().idOfKey("b")).isEqualTo(5);
    }
  }
}
