package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import java.io.IOException;
import java.io.RandomAccessFile;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A damaged folder never answers: flipping one byte anywhere in any file (codes, tables, manifest,
 * tombstones, attachment and every Lucene file), truncating a file or deleting the manifest makes
 * opening fail with a BadInputException that names the file.
 */
class DamageTest {
  @TempDir Path tmp;

  @Test
  void everyFlippedByteIsReportedWithItsFile() throws IOException {
    long seed = Randoms.seed(0);
    String why = Randoms.describe(seed);
    SplittableRandom rnd = new SplittableRandom(seed);
    CodeBlock sample = StoreFixtures.sample(seed);
    Path pristine = tmp.resolve("pristine");
    StoreFixtures.build(pristine, sample);
    try (IndexReader r = IndexReader.open(pristine)) {
      assertEquals(97, r.liveCount(), why);
    }
    List<Path> files = StoreFixtures.files(pristine);
    assertTrue(files.stream().anyMatch(f -> f.getFileName().toString().startsWith("tomb-")), "tombstones present");
    assertTrue(files.stream().anyMatch(f -> f.getParent().getFileName().toString().equals("meta")), "lucene files present");
    int trial = 0, checked = 0;
    for (Path file : files) {
      long size = Files.size(file);
      if (size == 0) continue; // the empty lock files carry no data
      String rel = pristine.relativize(file).toString();
      // first byte, last byte, and random positions in between
      long[] positions = {0, size - 1, rnd.nextLong(size), rnd.nextLong(size)};
      for (long pos : positions) {
        Path copy = tmp.resolve("t" + trial++);
        StoreFixtures.copy(pristine, copy);
        int bit = 1 << rnd.nextInt(8);
        try (RandomAccessFile raf = new RandomAccessFile(copy.resolve(rel).toFile(), "rw")) {
          raf.seek(pos);
          int b = raf.read();
          raf.seek(pos);
          raf.write(b ^ bit);
        }
        String where = why + " file " + rel + " byte " + pos + " bit " + bit;
        BadInputException e = assertThrows(BadInputException.class, () -> IndexReader.open(copy).close(), where);
        assertTrue(e.getMessage().contains(copy.resolve(rel).getFileName().toString()),
            where + ": message does not name the file: " + e.getMessage());
        checked++;
        deleteTree(copy);
      }
    }
    assertTrue(checked >= 4 * 8, "checked " + checked + " damaged copies");
  }

  @Test
  void truncatedFilesAreReportedWithTheirName() throws IOException {
    long seed = Randoms.seed(1);
    SplittableRandom rnd = new SplittableRandom(seed);
    Path pristine = tmp.resolve("pristine");
    StoreFixtures.build(pristine, StoreFixtures.sample(seed));
    int trial = 0;
    for (Path file : StoreFixtures.files(pristine)) {
      long size = Files.size(file);
      if (size == 0) continue;
      String rel = pristine.relativize(file).toString();
      for (long keep : new long[] {0, size - 1, rnd.nextLong(size)}) {
        Path copy = tmp.resolve("t" + trial++);
        StoreFixtures.copy(pristine, copy);
        try (RandomAccessFile raf = new RandomAccessFile(copy.resolve(rel).toFile(), "rw")) {
          raf.setLength(keep);
        }
        String where = Randoms.describe(seed) + " file " + rel + " truncated to " + keep;
        BadInputException e = assertThrows(BadInputException.class, () -> IndexReader.open(copy).close(), where);
        assertTrue(e.getMessage().contains(file.getFileName().toString()), where + ": " + e.getMessage());
        deleteTree(copy);
      }
    }
  }

  @Test
  void deletedManifestOrDeletedFileIsReported() throws IOException {
    long seed = Randoms.seed(2);
    Path pristine = tmp.resolve("pristine");
    StoreFixtures.build(pristine, StoreFixtures.sample(seed));
    int trial = 0;
    for (Path file : StoreFixtures.files(pristine)) {
      if (Files.size(file) == 0) continue;
      String rel = pristine.relativize(file).toString();
      Path copy = tmp.resolve("d" + trial++);
      StoreFixtures.copy(pristine, copy);
      Files.delete(copy.resolve(rel));
      String name = file.getFileName().toString();
      BadInputException e = assertThrows(BadInputException.class, () -> IndexReader.open(copy).close(), rel);
      // a missing manifest leaves no generation to name; the message says so
      String expected = name.startsWith("manifest-") ? "manifest" : name;
      assertTrue(e.getMessage().contains(expected), rel + ": " + e.getMessage());
      if (!name.startsWith("manifest-")) {
        // says the file is missing, in the words of the index's own files (Lucene's files were
        // "cannot be opened: java.nio.file.NoSuchFileException: ...", and for check "damaged: PATH")
        assertTrue(e.getMessage().contains(name + " is missing") || e.getMessage().contains(name + " named by the manifest is missing")
            || name.endsWith(".si"), rel + ": " + e.getMessage()); // a missing .si is found by Lucene, reading the commit
        IndexCheck.FileResult bad = IndexCheck.run(copy).firstDamaged();
        if (name.endsWith(".si")) { // the commit that lists it cannot be read without it: reported there, naming it
          assertTrue(bad.problem().contains(name), rel + ": " + bad);
        } else {
          assertEquals(rel, bad.file(), rel + ": " + bad);
          assertTrue(bad.problem().contains(name + " is missing"), rel + ": " + bad.problem());
        }
      }
      deleteTree(copy);
    }
  }

  @Test
  void aFolderWhereAFileBelongsIsRefusedByName() throws IOException {
    // a Lucene file made a folder gave Lucene's advice on 'ulimit -v' and mmap; meta/ made a file was "missing"
    long seed = Randoms.seed(5);
    Path pristine = tmp.resolve("pristine");
    StoreFixtures.build(pristine, StoreFixtures.sample(seed));
    int trial = 0;
    List<Path> files = new java.util.ArrayList<>(StoreFixtures.files(pristine));
    files.add(pristine.resolve("meta"));
    for (Path file : files) {
      String name = file.getFileName().toString();
      if (name.endsWith(".lock") || name.startsWith("manifest-")) continue; // the lock: IndexWriterTest; a manifest folder: StorageCommandsEndToEndTest
      String rel = pristine.relativize(file).toString();
      Path copy = tmp.resolve("f" + trial++);
      StoreFixtures.copy(pristine, copy);
      Path target = copy.resolve(rel);
      if (Files.isDirectory(target)) {
        deleteTree(target);
        Files.writeString(target, "x");
      } else {
        Files.delete(target);
        Files.createDirectory(target);
      }
      BadInputException e = assertThrows(BadInputException.class, () -> IndexReader.open(copy).close(), rel);
      String want = Files.isDirectory(target) ? name + " is a folder, not a file" : name + " is not a folder";
      assertTrue(e.getMessage().contains(want), rel + ": " + e.getMessage());
      IndexCheck.Report report = IndexCheck.run(copy);
      assertTrue(report.firstDamaged().problem().contains(want), rel + ": " + report.firstDamaged());
      deleteTree(copy);
    }
  }

  @Test
  void aStrayFileNamedLikeAManifestIsNotTakenForOne() throws IOException {
    // "manifest-0099" was read as generation 99, so the index failed to open: "manifest-99 is missing"
    Path dir = tmp.resolve("idx");
    StoreFixtures.build(dir, StoreFixtures.sample(Randoms.seed(4)));
    long generation = Manifest.newestGeneration(dir);
    for (String name : List.of("manifest-00" + (generation + 1), "manifest-0", "manifest-", "manifest-x1")) {
      Files.writeString(dir.resolve(name), "not a manifest");
      try (IndexReader r = IndexReader.open(dir)) {
        assertEquals(97, r.liveCount(), name);
      }
      assertEquals(generation, Manifest.newestGeneration(dir), name);
      assertTrue(IndexCheck.run(dir).ok(), name);
      Files.delete(dir.resolve(name));
    }
  }

  @Test
  void fileOfAnotherIndexIsRefused() throws IOException {
    long seed = Randoms.seed(3);
    CodeBlock sample = StoreFixtures.sample(seed);
    Path a = tmp.resolve("a"), b = tmp.resolve("b");
    StoreFixtures.build(a, sample);
    StoreFixtures.build(b, sample);
    Files.copy(b.resolve("seg-0.codes"), a.resolve("seg-0.codes"), java.nio.file.StandardCopyOption.REPLACE_EXISTING);
    BadInputException e = assertThrows(BadInputException.class, () -> IndexReader.open(a).close());
    assertTrue(e.getMessage().contains("seg-0.codes"), e.getMessage());
  }

  static void deleteTree(Path dir) throws IOException {
    List<Path> all;
    try (var s = Files.walk(dir)) {
      all = s.sorted(java.util.Comparator.reverseOrder()).toList();
    }
    for (Path p : all) Files.delete(p);
  }
}
