package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Files in an index folder that its manifest does not name: a stray Lucene commit in {@code meta/}
 * (junk, a copy under another generation, a cut-off commit) is ignored by readers and by the full
 * check (which lists it as a leftover, not as damage), and the next writer removes it; the
 * manifest's own commit missing or damaged stays an error naming it.
 */
class StrayFilesTest {
  @TempDir Path tmp;

  private static String metaCommit(Path dir) {
    return Manifest.read(dir, Manifest.newestGeneration(dir)).metaCommit();
  }

  /** Lucene's generation of a segments file name ("segments_a" is 10). */
  private static long generation(String segmentsFile) {
    return Long.parseLong(segmentsFile.substring("segments_".length()), Character.MAX_RADIX);
  }

  private static String segmentsFile(long generation) {
    return "segments_" + Long.toString(generation, Character.MAX_RADIX);
  }

  @Test
  void aStrayLuceneCommitIsIgnoredByReadersAndRemovedByTheNextWriter() throws IOException {
    long seed = Randoms.seed(0);
    CodeBlock sample = StoreFixtures.sample(seed);
    Path pristine = tmp.resolve("pristine");
    StoreFixtures.build(pristine, sample);
    String commit = metaCommit(pristine);
    long gen = generation(commit);
    byte[] real = Files.readAllBytes(pristine.resolve("meta").resolve(commit));
    // name -> content: junk past and before the commit, the commit copied under another generation, a cut-off copy
    List<Object[]> strays = List.of(
        new Object[] {segmentsFile(gen + 1), "not a commit".getBytes()},
        new Object[] {segmentsFile(gen + 7), new byte[0]},
        new Object[] {segmentsFile(1), "junk".getBytes()},
        new Object[] {segmentsFile(gen + 2), real},
        new Object[] {segmentsFile(gen + 3), Arrays.copyOf(real, real.length / 2)},
        new Object[] {"pending_" + segmentsFile(gen + 1), Arrays.copyOf(real, 10)});
    int trial = 0;
    for (Object[] stray : strays) {
      String name = (String) stray[0], why = Randoms.describe(seed) + " stray meta/" + name;
      Path dir = tmp.resolve("t" + trial++);
      StoreFixtures.copy(pristine, dir);
      Files.write(dir.resolve("meta").resolve(name), (byte[]) stray[1]);
      try (IndexReader r = IndexReader.open(dir)) {
        assertEquals(97, r.liveCount(), why);
        assertEquals("c1", r.meta().document(4).get("label"), why);
      }
      IndexCheck.Report report = IndexCheck.run(dir);
      assertTrue(report.ok(), why + ": " + report.firstDamaged());
      assertTrue(report.files().stream().noneMatch(f -> f.file().equals("meta/" + name)), why + ": checked as a file of the index");
      assertEquals(List.of(new IndexCheck.Leftover("meta/" + name, ((byte[]) stray[1]).length, true)), report.leftovers(), why);
      try (IndexWriter w = IndexWriter.open(dir)) {
        assertEquals(100, w.add(sample.slice(0, 5), StoreFixtures.rows(100, 5)), why);
      }
      try (IndexReader r = IndexReader.open(dir)) {
        assertEquals(102, r.liveCount(), why);
        assertEquals("k103", r.meta().document(103).get("key"), why);
      }
      assertTrue(IndexCheck.run(dir).ok(), why);
      assertFalse(Files.exists(dir.resolve("meta").resolve(name)) && !name.equals(metaCommit(dir)), why + ": stray kept");
      DamageTest.deleteTree(dir);
    }
  }

  @Test
  void theManifestsOwnCommitMissingOrDamagedBesideAStrayIsAnErrorNamingIt() throws IOException {
    long seed = Randoms.seed(1);
    Path pristine = tmp.resolve("pristine");
    StoreFixtures.build(pristine, StoreFixtures.sample(seed));
    String commit = metaCommit(pristine);
    String stray = segmentsFile(generation(commit) + 1);
    for (boolean missing : new boolean[] {true, false}) {
      Path dir = tmp.resolve(missing ? "missing" : "damaged");
      StoreFixtures.copy(pristine, dir);
      Path file = dir.resolve("meta").resolve(commit);
      Files.copy(file, dir.resolve("meta").resolve(stray)); // a copy under another generation: junk to Lucene
      if (missing) Files.delete(file);
      else Files.write(file, Arrays.copyOf(Files.readAllBytes(file), 20));
      String why = Randoms.describe(seed) + (missing ? " missing " : " damaged ") + commit;
      BadInputException e = assertThrows(BadInputException.class, () -> IndexReader.open(dir).close(), why);
      assertTrue(e.getMessage().contains(commit), why + ": " + e.getMessage());
      e = assertThrows(BadInputException.class, () -> IndexWriter.open(dir).close(), why);
      assertTrue(e.getMessage().contains(commit), why + ": " + e.getMessage());
      IndexCheck.FileResult bad = IndexCheck.run(dir).firstDamaged();
      assertEquals("meta/" + commit, bad.file(), why + ": " + bad);
      assertTrue(Files.exists(dir.resolve("meta").resolve(stray)), why + ": a writer that cannot open deleted the stray");
    }
  }
  /**
   * A killed add leaves the segment files, Lucene commit and temporary manifest it wrote before the
   * manifest's rename: check lists each as a leftover with its size (the index still verifies), and
   * the next writer removes every one it says it removes; a file of a name actindex never writes stays.
   */
  @Test
  void leftoversOfAKilledAddAreListedWithTheirSizeAndRemovedByTheNextWriter() throws IOException {
    long seed = Randoms.seed(2);
    String why = Randoms.describe(seed);
    CodeBlock sample = StoreFixtures.sample(seed);
    Path done = tmp.resolve("done"), killed = tmp.resolve("killed");
    StoreFixtures.build(done, sample);
    StoreFixtures.copy(done, killed);
    long gen = Manifest.newestGeneration(done);
    try (IndexWriter w = IndexWriter.open(done)) {
      w.add(sample.slice(0, 30), StoreFixtures.rows(100, 30));
    }
    java.util.Map<String, Long> expected = new java.util.TreeMap<>();
    for (Path f : StoreFixtures.files(done)) {
      String rel = done.relativize(f).toString();
      if (Files.exists(killed.resolve(rel))) continue;
      String as = rel.equals(Manifest.fileName(gen + 1)) ? rel + ".tmp" : rel; // renamed only after the kill
      if (rel.startsWith("manifest-") && !as.endsWith(".tmp")) continue;
      Files.copy(f, killed.resolve(as));
      expected.put(as, Files.size(f));
    }
    assertTrue(expected.keySet().stream().anyMatch(f -> f.startsWith("seg-")), why + ": " + expected);
    assertTrue(expected.keySet().stream().anyMatch(f -> f.startsWith("meta/segments_")), why + ": " + expected);
    Files.writeString(killed.resolve("notes.txt"), "a file of a name actindex never writes");

    IndexCheck.Report report = IndexCheck.run(killed);
    assertTrue(report.ok(), why + ": " + report.firstDamaged());
    java.util.Map<String, Long> listed = new java.util.TreeMap<>();
    for (IndexCheck.Leftover l : report.leftovers()) {
      listed.put(l.file(), l.bytes());
      assertEquals(!l.file().equals("notes.txt"), l.removedByWriter(), why + ": " + l);
    }
    java.util.Map<String, Long> all = new java.util.TreeMap<>(expected);
    all.put("notes.txt", Files.size(killed.resolve("notes.txt")));
    assertEquals(all, listed, why);
    try (IndexReader r = IndexReader.open(killed)) {
      assertEquals(97, r.liveCount(), why);
    }

    IndexWriter.open(killed).close();
    IndexCheck.Report after = IndexCheck.run(killed);
    assertTrue(after.ok(), why + ": " + after.firstDamaged());
    assertEquals(List.of(new IndexCheck.Leftover("notes.txt", all.get("notes.txt"), false)), after.leftovers(), why);
    for (String rel : expected.keySet()) assertFalse(Files.exists(killed.resolve(rel)), why + ": " + rel + " kept");
  }
}
