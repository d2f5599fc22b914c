package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
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
import java.util.ArrayList;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.concurrent.TimeUnit;
import io.actindex.index.meta.MetaOpeners;
import io.actindex.index.meta.MetaWriter;
import java.io.IOException;
import org.apache.lucene.store.Directory;
import org.apache.lucene.store.FilterDirectory;
import org.apache.lucene.store.IOContext;
import org.apache.lucene.store.IndexInput;
import org.apache.lucene.store.Lock;
import org.junit.jupiter.api.Tag;
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

  /**
   * {@code d}, running {@code before} ahead of each listing, read, deletion and lock request: the
   * points where another writer may run while this one opens the metadata store.
   */
  private static Directory counting(Directory d, Runnable before) {
    return new FilterDirectory(d) {
      @Override
      public String[] listAll() throws IOException {
        before.run();
        return super.listAll();
      }

      @Override
      public IndexInput openInput(String name, IOContext context) throws IOException {
        before.run();
        return super.openInput(name, context);
      }

      @Override
      public void deleteFile(String name) throws IOException {
        before.run();
        super.deleteFile(name);
      }

      @Override
      public Lock obtainLock(String name) throws IOException {
        before.run();
        return super.obtainLock(name);
      }
    };
  }

  /** A store layer whose metadata folder runs {@code before} ahead of each call {@link #counting} sees. */
  private static StoreIo metaCalls(Runnable before) {
    return new StoreIo.Forwarding(StoreIo.REAL) {
      @Override
      MetaWriter.Opener meta() {
        return MetaOpeners.wrapping(delegate.meta(), (metaDir, d) -> counting(d, before));
      }
    };
  }

  /** How many calls {@link #counting} sees while a writer opens {@code dir}. */
  private static int callsWhileOpening(Path dir) {
    int[] calls = {0};
    try (IndexWriter w = IndexWriter.open(dir, metaCalls(() -> calls[0]++))) {
      return calls[0];
    }
  }

  @Test
  void anotherWriterAtTheFirstOrLastCallOfTheMetadataOpenCommitsAloneOrIsRefused() throws Exception {
    Path source = index();
    int total = callsWhileOpening(source);
    assertTrue(total >= 3, "calls to the metadata folder while opening: " + total);
    otherWriterBeforeCall(source, 1);
    otherWriterBeforeCall(source, total);
  }

  /** As above at every call in turn (a child JVM each, about 40 s). */
  @Tag("slow")
  @Test
  void aWriterWhoseLockFileWasRemovedWhileItOpenedTheMetadataCommitsNothingAndLeavesTheOtherWritersCommitAlone()
      throws Exception {
    Path source = index();
    int total = callsWhileOpening(source);
    List<String> failures = new ArrayList<>();
    for (int at = 1; at <= total; at++) {
      try {
        otherWriterBeforeCall(source, at);
      } catch (AssertionError e) {
        failures.add("other writer before call " + at + " of " + total + ": " + e.getMessage());
      }
    }
    assertEquals(List.of(), failures);
  }

  /** On a copy of {@code source}: writer.lock removed and another process adding before the {@code at}-th call. */
  private void otherWriterBeforeCall(Path source, int at) throws Exception {
    Path dir = tmp.resolve("at" + at);
    StoreFixtures.copy(source, dir);
    Map<Path, String> before = contents(dir);
    int[] seen = {0};
    boolean[] opening = {true};
    String[] line = {null};
    StoreIo io = metaCalls(() -> {
      if (!opening[0] || ++seen[0] != at) return;
      try {
        Files.delete(dir.resolve(WriteLock.FILE));
        Process p = child(dir, "add");
        line[0] = firstLine(p);
        assertTrue(p.waitFor(60, TimeUnit.SECONDS));
      } catch (Exception e) {
        throw new IllegalStateException(e);
      }
    });
    Throwable thrown = assertThrows(Throwable.class, () -> {
      try (IndexWriter w = IndexWriter.open(dir, io)) {
        opening[0] = false;
        w.add(StoreFixtures.sample(7).slice(40, 50), StoreFixtures.rows(40, 10));
      }
    }, "this writer's add went through");
    assertTrue(thrown instanceof BadInputException, thrown.toString());
    assertLost((BadInputException) thrown, dir);
    assertTrue(line[0] != null, "the other writer did not run");
    if (line[0].equals("DONE")) { // its commit stands and answers queries
      CodeBlock theirs = StoreFixtures.sample(1).slice(0, LockChild.ADDED); // what LockChild adds
      try (IndexReader r = IndexReader.open(dir)) {
        assertEquals(40 + LockChild.ADDED, r.maxId());
        assertEquals(40, r.meta().idOfKey("k40"));
        for (int i = 0; i < LockChild.ADDED; i++) {
          int id = 40 + i;
          assertTrue(Arrays.stream(r.searchRadius(theirs.code(i), 0, null, null).ords()).anyMatch(o -> o == id),
              "id " + id + " not found at distance 0 from its code");
          assertArrayEquals(theirs.code(i), r.code(id), "id " + id);
        }
      }
      assertTrue(IndexCheck.run(dir).ok(), "check");
    } else { // refused by this writer's metadata lock: neither committed
      assertTrue(line[0].startsWith("REFUSED index " + dir + " is locked by another writer"), line[0]);
      assertEquals(before, contents(dir));
    }
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
