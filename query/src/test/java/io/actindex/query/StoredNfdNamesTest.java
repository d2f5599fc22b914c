package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.index.meta.Where;
import io.actindex.index.store.IndexReader;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Names are NFC once read from users' files, but an index written before that rule, or by a
 * library caller, may hold a layer or metadata field named in NFD ({@code cafe} + U+0301). Names
 * are compared to such stored names as the same name in either form: {@code --layers},
 * {@code --where} fields, query files' layers (through {@link CodeLayout#indexOf}) and CSV headers.
 */
class StoredNfdNamesTest {
  @TempDir Path tmp;

  static final String NFD = "cafe\u0301", NFC = "caf\u00e9";

  @Test
  void storedNfdNamesAreFoundByTheirNfcForm() {
    CodeLayout layout = new CodeLayout(List.of(new CodeLayout.Segment(NFD, 8), new CodeLayout.Segment("b", 4)));
    int n = 6;
    long[] words = new long[n];
    List<Map<String, String>> meta = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      words[i] = i * 37L & 0xfff;
      meta.add(Map.of("key", "k" + i, NFD, Integer.toString(i % 2)));
    }
    Path dir = tmp.resolve("idx");
    TestIndexes.write(dir, new CodeBlock(layout, n, words), meta, 1);
    try (IndexReader r = IndexReader.open(dir)) {
      assertThat(Layers.select(r.layout(), List.of(NFC))).containsExactly(0);
      assertThat(Layers.select(r.layout(), List.of("b", NFD))).containsExactly(1, 0);
      assertThat(Where.select(r.meta(), NFC + " = 1").toArray()).containsExactly(1, 3, 5);
      assertThat(Where.select(r.meta(), NFD + " = 1").toArray()).containsExactly(1, 3, 5);
    }
    SourceColumns.check(List.of(NFD, "x"), "the build's CSV", List.of(NFC, "x"), "q.csv"); // no refusal
  }
}
