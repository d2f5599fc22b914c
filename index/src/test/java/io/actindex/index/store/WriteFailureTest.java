package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.CodeBlock;
import io.actindex.core.SyntheticCodes;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.channels.FileChannel;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.Map;
import java.util.function.Predicate;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Write, disk-full and clean-up failures, injected through {@link StoreIo}: a failed add leaves no partial
 * segment file and the last commit readable; a clean-up that fails after the manifest is published
 * is a warning, the commit stands, and the rows are there once.
 */
class WriteFailureTest {
  @TempDir Path tmp;

  /** The real file system, except that {@code create} or {@code delete} of matching files fails. */
  private static StoreIo failing(Predicate<Path> failCreate, Predicate<Path> failDelete) {
    return new StoreIo.Forwarding(StoreIo.REAL) {
      @Override
      public FileChannel create(Path file) throws IOException {
        if (failCreate.test(file)) throw new IOException("Input/output error (injected)"); // EIO: an internal error (a full disk is a refusal, below)
        return super.create(file);
      }

      @Override
      public void delete(Path file) throws IOException {
        if (failDelete.test(file)) throw new IOException("Permission denied (injected)");
        super.delete(file);
      }
    };
  }

  private static List<String> names(Path dir) throws IOException {
    try (var s = Files.list(dir)) {
      return s.map(p -> p.getFileName().toString()).sorted().toList();
    }
  }

  @Test
  void failedAddLeavesNoPartialSegmentFiles() throws IOException {
    Path dir = tmp.resolve("idx");
    CodeBlock codes = SyntheticCodes.uniform(60, 64, 3);
    IndexWriter.create(dir, codes.layout(), Map.of()).close();
    try (IndexWriter w = IndexWriter.open(dir)) {
      w.add(codes.slice(0, 20), null);
    }
    List<String> before = names(dir);
    // the tables file of the new segment cannot be written: its codes file was already complete
    StoreIo full = failing(p -> p.getFileName().toString().endsWith(".tables") && !p.getFileName().toString().equals("seg-0.tables"),
        p -> false);
    IndexWriter w = IndexWriter.open(dir, full);
    UncheckedIOException e = assertThrows(UncheckedIOException.class, () -> w.add(codes.slice(20, 40), null));
    assertTrue(e.getMessage().contains("the last commit stands"), e.getMessage());
    assertEquals(before, names(dir), "no partial segment left");
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(20, r.maxId());
    }
    try (IndexWriter again = IndexWriter.open(dir)) {
      assertEquals(20, again.add(codes.slice(20, 40), null)); // a retry adds them once
    }
  }

  /** SHA-256 of every file under {@code dir}, by relative path (the Lucene folder included). */
  static Map<String, String> checksums(Path dir) throws IOException {
    Map<String, String> out = new java.util.TreeMap<>();
    try (var walk = Files.walk(dir)) {
      for (Path p : walk.filter(Files::isRegularFile).toList()) {
        try {
          out.put(dir.relativize(p).toString(),
              java.util.HexFormat.of().formatHex(java.security.MessageDigest.getInstance("SHA-256").digest(Files.readAllBytes(p))));
        } catch (java.security.NoSuchAlgorithmException e) {
          throw new AssertionError(e);
        }
      }
    }
    return out;
  }

  /** A new index in {@code dir} holding the first 30 codes with metadata rows (a Lucene commit). */
  static void indexOf30(Path dir, CodeBlock codes) {
    try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
      w.add(codes.slice(0, 30), rows(0, 30));
    }
  }

  /** Metadata rows with a key and a label, so that each add also commits Lucene. */
  static List<Map<String, String>> rows(int from, int n) {
    return java.util.stream.IntStream.range(from, from + n).mapToObj(i -> Map.of("key", "k" + i, "label", "l" + (i % 3))).toList();
  }

  /**
   * A full disk (the JDK's own ENOSPC exception, {@link io.actindex.core.NoSpace}) while an add, a
   * delete, an attachment or a compaction writes its files: refused as bad input naming the folder
   * and "no space left", every file of the index byte-identical afterwards, and the retry works.
   */
  @Test
  void diskFullIsRefusedNamingTheFolderAndLeavesTheIndexAsItWas() throws IOException {
    Path dir = tmp.resolve("idx");
    CodeBlock codes = SyntheticCodes.uniform(90, 64, 5);
    indexOf30(dir, codes);
    try (IndexWriter w = IndexWriter.open(dir)) {
      w.delete(3, 4);
    }
    Map<String, String> before = checksums(dir);
    List<String> kinds = List.of(".codes", ".tables", ".bits", ".bin");
    for (String kind : kinds) {
      StoreIo full = new StoreIo.Forwarding(StoreIo.REAL) {
        @Override
        public FileChannel create(Path file) throws IOException {
          if (file.getFileName().toString().endsWith(kind)) throw io.actindex.core.NoSpace.exception();
          return super.create(file);
        }
      };
      IndexWriter w = IndexWriter.open(dir, full);
      Runnable change = switch (kind) {
        case ".codes", ".tables" -> () -> w.add(codes.slice(30, 60), rows(30, 30));
        case ".bits" -> () -> w.delete(5, 6, 7);
        default -> () -> w.putAttachment("note", new byte[] {1, 2, 3});
      };
      io.actindex.core.BadInputException e = assertThrows(io.actindex.core.BadInputException.class, change::run, kind);
      assertTrue(e.getMessage().startsWith("index " + dir + ": no space left on device ("), e.getMessage());
      assertTrue(e.getMessage().contains("the change was not made, the index is as it was"), e.getMessage());
      assertEquals(before, checksums(dir), "index unchanged after a full disk at " + kind);
      w.close();
    }
    try (IndexWriter w = IndexWriter.open(dir)) {
      assertEquals(30, w.add(codes.slice(30, 60), rows(30, 30)));
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(58, r.liveCount());
    }
  }

  /**
   * Lucene's files of a change that failed after or during its Lucene commit (the manifest's rename
   * fails; Lucene's k-th output cannot be created on a full disk) are removed at once, and those a
   * crash left (a Lucene commit no manifest names) by the next writer's open; the published commit
   * stays, so every byte of the index equals what it was before the change.
   */
  @Test
  void luceneFilesOfAFailedOrCrashedChangeAreRemovedAndThePublishedCommitKept() throws IOException {
    Path dir = tmp.resolve("idx");
    CodeBlock codes = SyntheticCodes.uniform(90, 64, 6);
    indexOf30(dir, codes);
    Map<String, String> before = checksums(dir);
    // the manifest cannot be renamed into place: Lucene has committed the new documents
    StoreIo noRename = new StoreIo.Forwarding(StoreIo.REAL) {
      @Override
      public void move(Path from, Path to) throws IOException {
        throw new IOException("Input/output error (injected)");
      }
    };
    IndexWriter w1 = IndexWriter.open(dir, noRename);
    assertThrows(UncheckedIOException.class, () -> w1.add(codes.slice(30, 60), rows(30, 30)));
    assertEquals(before, checksums(dir), "after a failed manifest rename");
    // Lucene's k-th new file cannot be created (a full disk): every k up to a change that fits
    int failures = 0;
    for (int k = 0; ; k++) {
      int failAt = k;
      int[] outputs = {0};
      StoreIo luceneFull = new StoreIo.Forwarding(StoreIo.REAL) {
        @Override
        io.actindex.index.meta.MetaWriter.Opener meta() {
          return io.actindex.index.meta.MetaOpeners.wrapping(super.meta(), (d, opened) -> new org.apache.lucene.store.FilterDirectory(opened) {
            @Override
            public org.apache.lucene.store.IndexOutput createOutput(String name, org.apache.lucene.store.IOContext context) throws IOException {
              if (outputs[0]++ == failAt) throw io.actindex.core.NoSpace.exception();
              return super.createOutput(name, context);
            }
          });
        }
      };
      IndexWriter w = IndexWriter.open(dir, luceneFull);
      try {
        w.add(codes.slice(30, 60), rows(30, 30));
        w.close();
        break;
      } catch (io.actindex.core.BadInputException e) {
        failures++;
        assertTrue(e.getMessage().contains("no space left on device"), e.getMessage());
        assertEquals(before, checksums(dir), "after Lucene's output " + k + " failed");
      }
    }
    assertTrue(failures > 3, failures + " Lucene outputs");
    // a crash between the Lucene commit and the manifest: a later Lucene commit stays on disk...
    Path crashed = tmp.resolve("crashed");
    indexOf30(crashed, codes);
    Map<String, String> published = checksums(crashed);
    Manifest m = Manifest.read(crashed, Manifest.newestGeneration(crashed));
    try (io.actindex.index.meta.MetaWriter meta = io.actindex.index.meta.MetaWriter.open(crashed.resolve("meta"), m.metaCommit())) {
      meta.add(meta.prepare(30, 30, rows(30, 30)));
      meta.commit(); // and then the process dies: no manifest names this commit
    }
    assertTrue(!checksums(crashed).equals(published), "the unpublished commit is on disk");
    try (IndexReader r = IndexReader.open(crashed)) {
      assertEquals(30, r.liveCount()); // readers see the published commit
    }
    // ...until the next writer opens: it drops the unpublished commit and nothing else
    IndexWriter.open(crashed).close();
    assertEquals(published, checksums(crashed), "the next writer removed the crash's Lucene commit");
    try (IndexWriter w = IndexWriter.open(crashed)) {
      assertEquals(30, w.add(codes.slice(30, 60), rows(30, 30)));
    }
    try (IndexReader r = IndexReader.open(crashed)) {
      assertEquals(60, r.liveCount());
      assertEquals("k45", r.meta().document(45).get("key"));
    }
  }

  /**
   * The merge that follows an add's commit fails (a full disk while it writes its segment): the add
   * stands, so it returns its first id with a warning that says so, not an error that would invite
   * the caller to add the rows again; the merge leaves no file, and the next writer merges.
   */
  @Test
  void failedMergeAfterAnAddIsAWarningAndTheAddStands() throws IOException {
    Path dir = tmp.resolve("idx");
    CodeBlock codes = SyntheticCodes.uniform(90, 64, 7);
    MergePolicy pairs = new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, 2, MergePolicy.DEFAULT_FLOOR_CODES);
    try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
      w.add(codes.slice(0, 30), null); // seg-0
    }
    StoreIo full = new StoreIo.Forwarding(StoreIo.REAL) {
      @Override
      public FileChannel create(Path file) throws IOException {
        if (file.getFileName().toString().equals("seg-2.codes")) throw io.actindex.core.NoSpace.exception(); // the merge's output
        return super.create(file);
      }
    };
    IndexWriter w = IndexWriter.open(dir, full).mergePolicy(pairs);
    assertEquals(30, w.add(codes.slice(30, 60), null)); // seg-1, then the merge of seg-0 and seg-1 fails
    List<String> warnings = w.takeWarnings();
    assertEquals(1, warnings.size(), warnings.toString());
    assertTrue(warnings.get(0).contains("the add is committed (ids 30..59)"), warnings.get(0));
    assertTrue(warnings.get(0).contains("no space left on device"), warnings.get(0));
    w.close();
    assertEquals(List.of("manifest-3", "meta", "seg-0.codes", "seg-0.tables", "seg-1.codes", "seg-1.tables", "writer.lock"),
        names(dir), "the failed merge left no file");
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(60, r.liveCount());
    }
    try (IndexWriter again = IndexWriter.open(dir).mergePolicy(pairs)) {
      assertEquals(60, again.add(codes.slice(60, 90), null));
      assertEquals(1, again.segmentCount());
    }
  }

  /**
   * The rewrite that follows a delete's commit (a third of the only segment deleted) fails: the
   * delete stands and returns its count with a warning that says so; the rewrite leaves no file, the
   * deleted codes stay in their segment, and the next delete's rewrite drops them.
   */
  @Test
  void failedRewriteAfterADeleteIsAWarningAndTheDeleteStands() throws IOException {
    Path dir = tmp.resolve("idx");
    CodeBlock codes = SyntheticCodes.uniform(30, 64, 7);
    indexOf30(dir, codes); // seg-0
    StoreIo full = new StoreIo.Forwarding(StoreIo.REAL) {
      @Override
      public FileChannel create(Path file) throws IOException {
        if (file.getFileName().toString().equals("seg-1.codes")) throw io.actindex.core.NoSpace.exception(); // the rewrite's output
        return super.create(file);
      }
    };
    IndexWriter w = IndexWriter.open(dir, full);
    assertEquals(10, w.delete(java.util.stream.IntStream.range(0, 10).toArray()));
    List<String> warnings = w.takeWarnings();
    assertEquals(1, warnings.size(), warnings.toString());
    assertTrue(warnings.get(0).contains("the delete is committed (10 ids)"), warnings.get(0));
    assertTrue(warnings.get(0).contains("no space left on device"), warnings.get(0));
    w.close();
    assertEquals(List.of("manifest-3", "meta", "seg-0.codes", "seg-0.tables", "tomb-3.bits", "writer.lock"),
        names(dir), "the failed rewrite left no file");
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(20, r.liveCount());
      assertEquals(10, r.info().segments().get(0).deleted());
      assertEquals(-1, r.meta().idOfKey("k0"));
      assertEquals(10, r.meta().idOfKey("k10"));
    }
    try (IndexWriter again = IndexWriter.open(dir)) {
      assertEquals(1, again.delete(10));
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(List.of(19), r.info().segments().stream().map(IndexInfo.SegmentInfo::count).toList());
      assertEquals(11, r.meta().idOfKey("k11"));
    }
  }

  @Test
  void failedCleanUpAfterPublishingIsAWarning() throws IOException {
    Path dir = tmp.resolve("idx");
    CodeBlock codes = SyntheticCodes.uniform(60, 64, 4);
    IndexWriter.create(dir, codes.layout(), Map.of()).close();
    StoreIo stuck = failing(p -> false, p -> p.getFileName().toString().startsWith("manifest-"));
    try (IndexWriter w = IndexWriter.open(dir, stuck)) {
      assertEquals(0, w.add(codes.slice(0, 30), null));
      List<String> warnings = w.takeWarnings();
      assertEquals(1, warnings.size(), warnings.toString());
      assertTrue(warnings.get(0).contains("committed generation"), warnings.get(0));
      assertEquals(30, w.add(codes.slice(30, 60), null)); // the writer stays usable
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(60, r.maxId());
      assertEquals(60, r.liveCount());
    }
    try (IndexWriter w = IndexWriter.open(dir)) {
      assertEquals(List.of(), w.takeWarnings());
    }
    assertEquals(1, names(dir).stream().filter(n -> n.matches("manifest-\\d+")).count(), "the next writer cleaned up");
  }
}
