package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import java.io.BufferedReader;
import java.io.InputStreamReader;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Two writers on one folder, the other one a real process ({@link LockChild}): a writer held
 * elsewhere refuses with one line saying to wait, and a writer whose {@code writer.lock} was removed
 * (say by a user who took it for a stale lock file) while it held it commits nothing, so another
 * writer that locked a new file keeps its commit.
 */
class WriterLockTest {
  @TempDir Path tmp;

  private Path index() {
    Path dir = tmp.resolve("idx");
    CodeBlock sample = StoreFixtures.sample(7);
    try (IndexWriter w = IndexWriter.create(dir, sample.layout(), Map.of())) {
      w.add(sample.slice(0, 40), StoreFixtures.rows(0, 40));
      w.delete(3, 5);
    }
    return dir;
  }

  private static Process child(Path dir, String mode) throws Exception {
    String java = Path.of(System.getProperty("java.home"), "bin", "java").toString();
    return new ProcessBuilder(java, "-XX:TieredStopAtLevel=1", "-cp", System.getProperty("java.class.path"),
        LockChild.class.getName(), dir.toString(), mode).redirectError(ProcessBuilder.Redirect.INHERIT).start();
  }

  private static String firstLine(Process p) throws Exception {
    BufferedReader r = new BufferedReader(new InputStreamReader(p.getInputStream(), StandardCharsets.UTF_8));
    return r.readLine();
  }

  /** Every file's bytes but the lock file's (empty, and replaced in one test). */
  private static Map<Path, String> contents(Path dir) throws Exception {
    Map<Path, String> out = new LinkedHashMap<>();
    for (Path f : StoreFixtures.files(dir))
      if (!f.getFileName().toString().equals(WriteLock.FILE))
        out.put(dir.relativize(f), java.util.HexFormat.of().formatHex(Files.readAllBytes(f)));
    return out;
  }

  @Test
  void aWriterInAnotherProcessIsRefusedInOneLineThatSaysToWait() throws Exception {
    Path dir = index();
    Map<Path, String> before = contents(dir);
    Process p = child(dir, "hold");
    try {
      assertEquals("HELD", firstLine(p));
      BadInputException e = assertThrows(BadInputException.class, () -> IndexWriter.open(dir));
      String m = e.getMessage();
      assertTrue(m.contains("index " + dir) && m.contains("another process"), m);
      assertTrue(m.contains("wait for that one to end and run this again") && m.contains("do not remove"), m);
      assertFalse(m.contains("\n"), m);
      assertEquals(before, contents(dir));
    } finally {
      p.getOutputStream().close();
      assertTrue(p.waitFor(60, TimeUnit.SECONDS));
    }
    assertEquals(0, p.exitValue());
    try (IndexWriter w = IndexWriter.open(dir)) { // the lock ended with the process
      assertEquals(40, w.maxId());
    }
  }

  @Test
  void withTheLockFileRemovedTheOtherProcessIsRefusedByTheMetadataLockAndThisWriterCommitsNothing() throws Exception {
    Path dir = index();
    Map<Path, String> before = contents(dir);
    try (IndexWriter w = IndexWriter.open(dir)) {
      Files.delete(dir.resolve(WriteLock.FILE));
      // the other process locks a new writer.lock, then meets this writer's lock on the metadata store
      Process p = child(dir, "add");
      String line = firstLine(p);
      assertTrue(p.waitFor(60, TimeUnit.SECONDS));
      // it was an internal error (exit 1): "LockObtainFailedException: Lock held by another program: .../meta/write.lock"
      assertEquals(2, p.exitValue(), line);
      assertTrue(line.startsWith("REFUSED index " + dir + " is locked by another writer") && line.contains("wait"), line);
      BadInputException e = assertThrows(BadInputException.class,
          () -> w.add(StoreFixtures.sample(7).slice(40, 50), StoreFixtures.rows(40, 10)));
      assertLost(e, dir);
      assertEquals(before, contents(dir));
    }
    try (IndexWriter w = IndexWriter.open(dir)) {
      assertEquals(40, w.maxId());
    }
  }

  @Test
  void aWriterWhoseLockFileWasRemovedBeforeItOpenedTheMetadataLeavesTheOtherWritersCommitAlone() throws Exception {
    Path dir = index();
    boolean[] ran = {false};
    // between taking writer.lock and opening the metadata store (the folder fsync), the lock file is removed and
    // another process commits an add: this writer's manifest is stale from then on
    StoreIo io = new StoreIo.Forwarding(StoreIo.REAL) {
      @Override
      public void syncDir(Path d) throws java.io.IOException {
        super.syncDir(d);
        if (ran[0]) return;
        ran[0] = true;
        try {
          Files.delete(dir.resolve(WriteLock.FILE));
          Process p = child(dir, "add");
          assertEquals("DONE", firstLine(p));
          assertTrue(p.waitFor(60, TimeUnit.SECONDS));
        } catch (java.io.IOException e) {
          throw e;
        } catch (Exception e) {
          throw new IllegalStateException(e);
        }
      }
    };
    // it opened, deleted the child's segment files and Lucene commit as leftovers of its older manifest, and its add
    // published a manifest of the same generation over the child's: the child's 20 rows were lost
    BadInputException e = assertThrows(BadInputException.class, () -> IndexWriter.open(dir, io));
    assertTrue(ran[0]);
    assertLost(e, dir);
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(40 + LockChild.ADDED, r.maxId());
      assertEquals(38 + LockChild.ADDED, r.liveCount());
      assertEquals(40, r.meta().idOfKey("k40")); // the child's first row
    }
    assertTrue(IndexCheck.run(dir).ok());
  }

  private static void assertLost(BadInputException e, Path dir) {
    String m = e.getMessage();
    assertTrue(m.contains("index " + dir) && m.contains("writer.lock was removed or replaced") && m.contains("not committed")
        && m.contains("check --index " + dir), m);
    assertFalse(m.contains("\n"), m);
  }

  @Test
  void aReplacedLockFileStopsEveryChangeBeforeItWrites() throws Exception {
    Path dir = index();
    Map<Path, String> before = contents(dir);
    try (IndexWriter w = IndexWriter.open(dir)) {
      Files.delete(dir.resolve(WriteLock.FILE));
      Files.createFile(dir.resolve(WriteLock.FILE));
      assertLost(assertThrows(BadInputException.class, () -> w.delete(1, 2)), dir);
      assertEquals(before, contents(dir));
    }
    try (IndexWriter w = IndexWriter.open(dir)) { // the new file is free: the next writer goes on
      assertEquals(2, w.delete(1, 2));
    }
  }
}
