package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import java.net.URISyntaxException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * An index folder written by format version 1 (checked in under test resources
 * {@code fixtures/index-v1}) still opens and answers. If this fails after a format change, the
 * change needs a new VERSION_CURRENT and a reader for version 1, not a new fixture.
 * Regenerate only when version 1 itself was wrong: run {@link #main} with the output folder.
 */
class FormatV1FixtureTest {
  @TempDir Path tmp;

  /** Writes the fixture: 30 codes in two segments, ids 3 and 25 deleted, one attachment. */
  public static void main(String[] args) {
    Path dir = Path.of(args[0]);
    try (IndexWriter w = IndexWriter.create(dir, CrashChild.LAYOUT, Map.of("made.by", "FormatV1FixtureTest"))) {
      w.add(block(0, 20), rows(0, 20));
      w.add(block(20, 30), rows(20, 30));
      w.delete(3, 25);
      w.putAttachment("note", "fixture v1".getBytes(StandardCharsets.UTF_8));
    }
  }

  private static CodeBlock block(int from, int to) {
    int w = CrashChild.LAYOUT.words();
    long[] words = new long[(to - from) * w];
    for (int id = from; id < to; id++) System.arraycopy(CrashChild.code(id), 0, words, (id - from) * w, w);
    return new CodeBlock(CrashChild.LAYOUT, to - from, words);
  }

  private static List<Map<String, String>> rows(int from, int to) {
    List<Map<String, String>> rows = new ArrayList<>();
    for (int id = from; id < to; id++) rows.add(CrashChild.row(id));
    return rows;
  }

  @Test
  void version1FolderOpensAndAnswers() throws URISyntaxException {
    Path fixture = Path.of(getClass().getResource("/fixtures/index-v1/manifest-5").toURI()).getParent();
    Path dir = tmp.resolve("copy");
    StoreFixtures.copy(fixture, dir);
    CodeBlock all = block(0, 30);
    RoaringBitmap deleted = RoaringBitmap.bitmapOf(3, 25);
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(CrashChild.LAYOUT, r.layout());
      assertEquals(30, r.maxId());
      assertEquals(28, r.liveCount());
      assertEquals(Map.of("made.by", "FormatV1FixtureTest"), r.properties());
      assertArrayEquals("fixture v1".getBytes(StandardCharsets.UTF_8), r.attachment("note"));
      assertEquals(2, r.info().segments().size());
      for (int id = 0; id < 30; id++) {
        if (deleted.contains(id)) continue;
        assertArrayEquals(CrashChild.code(id), r.code(id));
        assertEquals(CrashChild.row(id), r.meta().document(id));
      }
      for (int q = 0; q < 30; q += 7) {
        long[] query = CrashChild.code(100 + q);
        Hits expected = BruteForce.knn(all, query, 5, id -> !deleted.contains(id), null);
        assertEquals(expected, r.search(query, 5, null, null));
      }
    }
  }
}
