package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.meta.MetaWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/** Writer life cycle: lock, refusals that change nothing, properties, attachments, compaction, info. */
class IndexWriterTest {
  @TempDir Path tmp;

  @Test
  void secondWriterIsRefusedUntilTheFirstCloses() {
    Path dir = tmp.resolve("idx");
    CodeLayout layout = CodeLayout.single("bits", 64);
    try (IndexWriter w = IndexWriter.create(dir, layout, Map.of())) {
      BadInputException e = assertThrows(BadInputException.class, () -> IndexWriter.open(dir));
      assertTrue(e.getMessage().contains("is locked by another writer"), e.getMessage());
      assertTrue(e.getMessage().contains(dir.toString()), e.getMessage());
      w.add(SyntheticCodes.uniform(3, 64, 1), null);
    }
    try (IndexWriter w = IndexWriter.open(dir)) {
      assertEquals(3, w.maxId());
    }
  }

  @Test
  void aFolderWhereTheLockFileBelongsIsRefusedByName() throws Exception {
    // it was an internal error: "FileSystemException: .../writer.lock: Is a directory"
    Path dir = tmp.resolve("idx");
    try (IndexWriter w = IndexWriter.create(dir, CodeLayout.single("bits", 64), Map.of())) {
      w.add(SyntheticCodes.uniform(3, 64, 1), null);
    }
    Files.delete(dir.resolve("writer.lock"));
    Files.createDirectory(dir.resolve("writer.lock"));
    BadInputException e = assertThrows(BadInputException.class, () -> IndexWriter.open(dir));
    assertTrue(e.getMessage().contains("writer.lock") && e.getMessage().contains("folder"), e.getMessage());
    try (IndexReader r = IndexReader.open(dir)) { // readers take no lock
      assertEquals(3, r.liveCount());
    }
  }

  @Test
  void createRefusesAFolderThatIsNotEmpty() throws Exception {
    Path dir = tmp.resolve("full");
    Files.createDirectories(dir);
    Files.writeString(dir.resolve("x.txt"), "hello");
    BadInputException e = assertThrows(BadInputException.class,
        () -> IndexWriter.create(dir, CodeLayout.single("bits", 8), Map.of()));
    assertTrue(e.getMessage().contains("not empty"), e.getMessage());
    assertEquals(List.of(dir.resolve("x.txt")), StoreFixtures.files(dir));
  }

  @Test
  void refusedAddsChangeNothingAndTheWriterStaysUsable() {
    long seed = Randoms.seed(0);
    Path dir = tmp.resolve("idx");
    CodeBlock codes = SyntheticCodes.uniform(10, 70, seed);
    try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
      w.add(codes.slice(0, 4), StoreFixtures.rows(0, 4));
      // wrong layout
      BadInputException e = assertThrows(BadInputException.class, () -> w.add(SyntheticCodes.uniform(2, 71, seed), null));
      assertTrue(e.getMessage().contains("layout"), e.getMessage());
      // duplicate key with an existing row
      List<Map<String, String>> dup = StoreFixtures.rows(4, 3);
      dup.get(2).put("key", "k1");
      e = assertThrows(BadInputException.class, () -> w.add(codes.slice(4, 7), dup));
      assertTrue(e.getMessage().contains("row 2") && e.getMessage().contains("'k1'"), e.getMessage());
      // duplicate key inside the batch
      List<Map<String, String>> dup2 = StoreFixtures.rows(4, 3);
      dup2.get(1).put("key", "k4");
      e = assertThrows(BadInputException.class, () -> w.add(codes.slice(4, 7), dup2));
      assertTrue(e.getMessage().contains("row 1"), e.getMessage());
      // a non-number in a numeric column
      List<Map<String, String>> bad = StoreFixtures.rows(4, 3);
      bad.get(2).put("score", "high");
      e = assertThrows(BadInputException.class, () -> w.add(codes.slice(4, 7), bad));
      assertTrue(e.getMessage().contains("row 2") && e.getMessage().contains("score"), e.getMessage());
      // reserved column and wrong row count
      List<Map<String, String>> reserved = StoreFixtures.rows(4, 3);
      reserved.get(0).put("id", "7");
      assertThrows(BadInputException.class, () -> w.add(codes.slice(4, 7), reserved));
      assertThrows(BadInputException.class, () -> w.add(codes.slice(4, 7), StoreFixtures.rows(4, 2)));
      assertEquals(4, w.add(codes.slice(4, 7), StoreFixtures.rows(4, 3)));
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(7, r.maxId());
      assertEquals(7, r.meta().numDocs());
      for (int id = 0; id < 7; id++) {
        assertArrayEquals(codes.code(id), r.code(id));
        assertEquals("k" + id, r.meta().document(id).get("key"));
        assertEquals(id, r.meta().idOfKey("k" + id));
      }
    }
  }

  @Test
  void deletedKeysMayBeReusedAndIdsAreNot() {
    Path dir = tmp.resolve("idx");
    CodeBlock codes = SyntheticCodes.uniform(6, 64, 7);
    try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
      w.add(codes.slice(0, 3), StoreFixtures.rows(0, 3));
      assertEquals(2, w.delete(1, 2, 99));
      assertEquals(0, w.delete(1, 2));
      List<Map<String, String>> again = StoreFixtures.rows(3, 1);
      again.get(0).put("key", "k1");
      assertEquals(3, w.add(codes.slice(3, 4), again));
      w.compact();
      assertEquals(4, w.add(codes.slice(4, 6), null));
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(6, r.maxId());
      assertArrayEquals(new int[] {0, 3, 4, 5}, r.liveIds().toArray());
      assertEquals(3, r.meta().idOfKey("k1"));
      assertNull(r.meta().document(1));
      assertEquals("row-5", r.meta().document(5).get("key"));
      assertThrows(io.actindex.core.BadParameterException.class, () -> r.code(1));
      assertArrayEquals(codes.code(3), r.code(3));
      IndexInfo info = r.info();
      assertEquals(2, info.segments().size());
      IndexInfo.SegmentInfo merged = info.segments().get(0);
      assertEquals(0, merged.firstId());
      assertEquals(4, merged.endId());
      assertEquals(2, merged.count());
      assertEquals(0, merged.deleted());
      assertEquals(4, info.liveCount());
      assertTrue(info.bytesOnDisk() > info.segments().stream().mapToLong(IndexInfo.SegmentInfo::bytes).sum());
    }
  }

  /**
   * A property of over 1 MiB (the medians of a 60,000-unit layer kept by build --median) was
   * written, and then every open refused the manifest ("impossible length"): an index built with
   * exit code 0 that no command could read.
   */
  @Test
  void aPropertyOfSeveralMegabytesIsReadBack() {
    Path dir = tmp.resolve("idx");
    StringBuilder medians = new StringBuilder();
    java.util.SplittableRandom rnd = new java.util.SplittableRandom(5);
    for (int i = 0; i < 150_000; i++) medians.append(i == 0 ? "" : ",").append(rnd.nextGaussian());
    try (IndexWriter w = IndexWriter.create(dir, CodeLayout.single("bits", 32), Map.of("encode.median.bits", medians.toString()))) {
      w.putProperties(Map.of("other", "1"));
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(medians.toString(), r.properties().get("encode.median.bits"));
      assertTrue(medians.length() > 2 << 20);
    }
  }

  @Test
  void propertiesAndAttachmentsAreCommitted() {
    Path dir = tmp.resolve("idx");
    byte[] blob = new byte[100_000];
    new java.util.SplittableRandom(3).nextBytes(blob);
    try (IndexWriter w = IndexWriter.create(dir, CodeLayout.single("bits", 32), Map.of("a", "1"))) {
      w.putProperties(Map.of("b", "2", "a", "3"));
      w.putAttachment("model.safetensors", blob);
      w.putAttachment("empty", new byte[0]);
      w.putAttachment("model.safetensors", new byte[] {1, 2, 3});
      w.putAttachment("model.safetensors", blob);
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(Map.of("a", "3", "b", "2"), r.properties());
      assertArrayEquals(blob, r.attachment("model.safetensors"));
      assertArrayEquals(new byte[0], r.attachment("empty"));
      assertNull(r.attachment("nope"));
    }
    // exactly one manifest and the two live attachment files remain
    long manifests = StoreFixtures.files(dir).stream().filter(f -> f.getFileName().toString().startsWith("manifest-")).count();
    long atts = StoreFixtures.files(dir).stream().filter(f -> f.getFileName().toString().startsWith("att-")).count();
    assertEquals(1, manifests);
    assertEquals(2, atts);
  }

  @Test
  void luceneCommitWithoutManifestIsIgnoredAndDropped() throws Exception {
    // a writer that died between the metadata commit and the manifest commit
    Path dir = tmp.resolve("idx");
    CodeBlock codes = SyntheticCodes.uniform(5, 64, 11);
    try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
      w.add(codes.slice(0, 2), StoreFixtures.rows(0, 2));
    }
    String named = Manifest.read(dir, Manifest.newestGeneration(dir)).metaCommit();
    try (MetaWriter orphan = MetaWriter.open(dir.resolve("meta"), named)) {
      orphan.add(orphan.prepare(2, 2, StoreFixtures.rows(2, 2)));
      String later = orphan.commit();
      assertTrue(!later.equals(named), later);
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(2, r.maxId());
      assertEquals(2, r.meta().numDocs());
      assertEquals(-1, r.meta().idOfKey("k2"));
    }
    try (IndexWriter w = IndexWriter.open(dir)) {
      List<Map<String, String>> rows = StoreFixtures.rows(2, 3);
      assertEquals(2, w.add(codes.slice(2, 5), rows)); // key k2 is free again
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(5, r.meta().numDocs());
      for (int id = 0; id < 5; id++) assertEquals(id, r.meta().idOfKey("k" + id));
    }
  }

  @Test
  void numericColumnsKeepTheirKind() {
    Path dir = tmp.resolve("idx");
    CodeBlock codes = SyntheticCodes.uniform(4, 16, 5);
    try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
      Map<String, String> a = new HashMap<>(Map.of("x", "1.5", "y", "abc", "label", "7"));
      Map<String, String> b = new HashMap<>(Map.of("x", "", "y", "2"));
      w.add(codes.slice(0, 2), List.of(a, b));
      Map<String, String> c = new HashMap<>(Map.of("y", "3", "z", "-2e3"));
      Map<String, String> d = new HashMap<>(Map.of("x", "NaN"));
      BadInputException e = assertThrows(BadInputException.class, () -> w.add(codes.slice(2, 4), List.of(c, d)));
      assertTrue(e.getMessage().contains("row 1") && e.getMessage().contains("'x'"), e.getMessage());
      d.put("x", "+4.");
      w.add(codes.slice(2, 4), List.of(c, d));
    }
    try (IndexReader r = IndexReader.open(dir)) {
      var kinds = r.meta().fields();
      assertEquals(io.actindex.index.meta.MetaStore.FieldKind.NUMBER, kinds.get("x"));
      assertEquals(io.actindex.index.meta.MetaStore.FieldKind.KEYWORD, kinds.get("y"));
      assertEquals(io.actindex.index.meta.MetaStore.FieldKind.NUMBER, kinds.get("z"));
      assertEquals(io.actindex.index.meta.MetaStore.FieldKind.KEYWORD, kinds.get("label"));
      assertEquals(Map.of("key", "row-0", "x", "1.5", "y", "abc", "label", "7"), r.meta().document(0));
      assertEquals(Map.of("key", "row-1", "y", "2"), r.meta().document(1));
      assertEquals("+4.", r.meta().document(3).get("x"));
      assertArrayEquals(new int[] {0, 3},
          io.actindex.index.meta.MetaQueries.select(r.meta(), org.apache.lucene.document.DoublePoint.newRangeQuery("x", 0, 10)).toArray());
    }
  }
}
