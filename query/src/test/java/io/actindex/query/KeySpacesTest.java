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
    Path dir = libraryKeys(build("stored"));
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

  /**
   * {@code --where} on {@code key} names a key the way add and delete do ({@link
   * io.actindex.index.meta.MetaStore#idOfKey}): {@code key = a} missed a key stored as {@code ' a'}
   * (by a library caller, or in an index built before keys lost their spaces) that {@code delete
   * --keys} deletes for the line {@code a}. A key stored both ways ({@code c} from the CSV, {@code
   * ' c'} from the library) is named as written first, by the filter as by the delete.
   */
  @Test
  void whereOnKeyMatchesWhatDeleteByKeyTakes() {
    Path dir = libraryKeys(build("where-stored")); // ids 0-3: lead, q, c, d from the CSV; 4-6: ' a\t', 'b ', ' c'
    List<String> typed = List.of("a", " a", "a\t", " a\t", "b", "b ", "c", " c", "c ", "lead", " lead ", "q", "zz", " zz");
    try (IndexReader r = IndexReader.open(dir)) {
      for (String k : typed) {
        int id = r.meta().idOfKey(k);
        int[] want = id < 0 ? new int[0] : new int[] {id};
        String quoted = "'" + k.replace("'", "\\'") + "'";
        assertThat(Where.select(r.meta(), "key = " + quoted).toArray()).as("key = %s", quoted).containsExactly(want);
        assertThat(Where.select(r.meta(), "key in (" + quoted + ", zz)").toArray()).as("key in %s", quoted).containsExactly(want);
        assertThat(Where.select(r.meta(), "key != " + quoted).toArray()).as("key != %s", quoted)
            .containsExactly(Arrays.stream(r.liveIds().toArray()).filter(i -> i != id).toArray());
      }
      assertThat(r.meta().idOfKey("a")).isEqualTo(4);
      assertThat(r.meta().idOfKey("c")).isEqualTo(2);
      assertThat(r.meta().idOfKey(" c")).isEqualTo(6);
      assertThat(Where.select(r.meta(), "key in (a, b, c, ' c')").toArray()).containsExactly(2, 4, 5, 6);
    }
    // deleting by the filter takes what deleting by the keys file takes
    Path byKeys = TestFiles.csv(tmp.resolve("keys-abc.txt"), "a\nb\n c\n");
    Delete.Result d = Delete.run(new Delete.Params(dir, null, "key in (a, b, ' c')"));
    assertThat(d.deleted()).isEqualTo(3);
    assertThat(keys(dir)).containsExactly("lead", "q", "c", "d");
    Path again = libraryKeys(build("where-stored-keys"));
    assertThat(Delete.run(new Delete.Params(again, byKeys, null)).deleted()).isEqualTo(3);
    assertThat(keys(again)).containsExactly("lead", "q", "c", "d");
  }

  /** {@code dir} with three more examples added through the library, keys {@code ' a\t'}, {@code 'b '}, {@code ' c'} as written. */
  private static Path libraryKeys(Path dir) {
    try (IndexWriter w = IndexWriter.open(dir)) {
      CodeLayout layout;
      long[] words;
      try (IndexReader r = IndexReader.open(dir)) {
        layout = r.layout();
        words = r.code(0);
      }
      for (String key : List.of(" a\t", "b ", " c"))
        w.add(new CodeBlock(layout, 1, words), List.of(new java.util.HashMap<>(java.util.Map.of("key", key, "label", "x"))));
    }
    return dir;
  }
}
