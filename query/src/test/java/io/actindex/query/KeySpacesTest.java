package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.index.meta.Where;
import io.actindex.index.store.IndexReader;
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
}
