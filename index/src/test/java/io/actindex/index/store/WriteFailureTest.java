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
 * Disk-full and clean-up failures, injected through {@link StoreIo}: a failed add leaves no partial
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
        if (failCreate.test(file)) throw new IOException("No space left on device (injected)");
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
