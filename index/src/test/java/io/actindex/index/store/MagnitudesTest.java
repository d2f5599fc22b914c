package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import java.io.RandomAccessFile;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Kept magnitudes: the quantisation error bound (half a step per value, zeros exact), the packed
 * layouts of 2, 4 and 8 bits, the file round trip through the index, compaction, and refusals.
 * Damage to the file is covered by {@link DamageTest} (its fixture keeps magnitudes).
 */
class MagnitudesTest {
  @TempDir Path tmp;

  @Test
  void dequantisedValuesAreWithinHalfAStepAndZerosStayZero() {
    for (int trial = 0; trial < 30; trial++) {
      long seed = Randoms.seed(trial);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = 1 + rnd.nextInt(60), d = 1 + rnd.nextInt(41);
      int bits = new int[] {2, 4, 8}[rnd.nextInt(3)];
      float[] v = new float[n * d];
      for (int i = 0; i < v.length; i++) v[i] = rnd.nextInt(3) == 0 ? 0f : (float) (rnd.nextDouble() * 5 * (1 + i % 3));
      Magnitudes m = Magnitudes.quantise(v, n, d, bits);
      assertEquals((long) n * Magnitudes.rowBytes(d, bits), m.dataBytes());
      for (int i = 0; i < n; i++) {
        float[] row = m.row(i);
        for (int j = 0; j < d; j++) {
          float x = v[i * d + j];
          // the step is (max - min) / (2^bits - 1) of the column, computed here independently
          double lo = Double.POSITIVE_INFINITY, hi = Double.NEGATIVE_INFINITY;
          for (int r = 0; r < n; r++) {
            lo = Math.min(lo, v[r * d + j]);
            hi = Math.max(hi, v[r * d + j]);
          }
          double step = (hi - lo) / ((1 << bits) - 1);
          String why = Randoms.describe(seed) + " bits " + bits + " row " + i + " unit " + j;
          assertTrue(Math.abs(row[j] - x) <= step / 2 + 1e-5 * (1 + Math.abs(x)), why + ": " + row[j] + " vs " + x);
          if (x == 0 && lo == 0) assertEquals(0f, row[j], why);
        }
      }
    }
  }

  @Test
  void indexKeepsMagnitudesThroughAddsDeletesAndCompaction() {
    long seed = Randoms.seed(7);
    CodeBlock sample = StoreFixtures.sample(seed);
    Path dir = tmp.resolve("idx");
    StoreFixtures.build(dir, sample); // segments of 40 (8 bits), 25 (4 bits), 35 (8 bits); 3, 41, 77 deleted
    int d = sample.layout().bits();
    float[] want = StoreFixtures.values(sample, 0, 100);
    float[] got = new float[d];
    try (IndexReader r = IndexReader.open(dir)) {
      assertTrue(r.hasMagnitudes());
      for (int id = 0; id < 100; id++) {
        if (!r.isLive(id)) continue;
        assertTrue(r.magnitudes(id, got, 0));
        for (int j = 0; j < d; j++) assertEquals(want[id * d + j], got[j], 6.25 / 15 / 2 + 1e-4, "id " + id + " unit " + j);
      }
    }
    // the 4-bit segment merges with the 8-bit ones at 8 bits: within half a 4-bit step plus half an 8-bit one
    try (IndexWriter w = IndexWriter.open(dir)) {
      w.compact();
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(8, r.magnitudeBits());
      for (int id = 0; id < 100; id++) {
        if (!r.isLive(id)) continue;
        assertTrue(r.magnitudes(id, got, 0));
        for (int j = 0; j < d; j++)
          assertEquals(want[id * d + j], got[j], 6.25 / 15 / 2 + 6.25 / 255 / 2 + 1e-4, "compacted id " + id + " unit " + j);
      }
    }
    Path same = tmp.resolve("same");
    try (IndexWriter w = IndexWriter.create(same, sample.layout(), Map.of())) {
      w.add(sample.slice(0, 50), StoreFixtures.magnitudes(sample, 0, 50, 8), null);
      w.add(sample.slice(50, 100), StoreFixtures.magnitudes(sample, 50, 50, 8), null);
      w.delete(5, 60);
      w.compact();
    }
    try (IndexReader r = IndexReader.open(same)) {
      assertEquals(1, r.info().segments().size());
      assertTrue(r.hasMagnitudes());
      assertEquals(8, r.magnitudeBits());
      for (int id = 0; id < 100; id++) {
        if (!r.isLive(id)) continue;
        assertTrue(r.magnitudes(id, got, 0));
        // requantised over the union range: at most half the old step plus half the new one
        for (int j = 0; j < d; j++) assertEquals(want[id * d + j], got[j], 6.25 / 255 + 1e-4, "id " + id + " unit " + j);
      }
    }
    assertFalse(Files.exists(same.resolve("seg-0.mags")), "the compacted segments' files are gone");
    assertTrue(Files.exists(same.resolve("seg-2.mags")));
  }

  @Test
  void compactionOfIdenticalQuantisationCopiesRowsExactly() {
    CodeBlock sample = StoreFixtures.sample(Randoms.seed(3));
    Path dir = tmp.resolve("idx");
    Magnitudes all = StoreFixtures.magnitudes(sample, 0, 100, 4);
    float[] before = new float[100 * sample.layout().bits()];
    for (int i = 0; i < 100; i++) all.dequantise(i, before, i * sample.layout().bits());
    try (IndexWriter w = IndexWriter.create(dir, sample.layout(), Map.of())) {
      w.add(sample, all, null);
      w.delete(0, 99);
      w.compact();
    }
    int d = sample.layout().bits();
    float[] got = new float[d];
    try (IndexReader r = IndexReader.open(dir)) {
      for (int id = 1; id < 99; id++) {
        r.magnitudes(id, got, 0);
        assertArrayEquals(java.util.Arrays.copyOfRange(before, id * d, id * d + d), got, "id " + id);
      }
    }
  }

  @Test
  void indexWithoutMagnitudesSaysSo() {
    CodeBlock sample = StoreFixtures.sample(Randoms.seed(4));
    Path dir = tmp.resolve("idx");
    try (IndexWriter w = IndexWriter.create(dir, sample.layout(), Map.of())) {
      w.add(sample.slice(0, 10), null);
      w.add(sample.slice(10, 20), StoreFixtures.magnitudes(sample, 10, 10, 8), null);
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertFalse(r.hasMagnitudes(), "one segment keeps none");
      assertFalse(r.magnitudes(3, new float[sample.layout().bits()], 0));
      assertTrue(r.magnitudes(13, new float[sample.layout().bits()], 0));
    }
  }

  @Test
  void wrongRowCountIsRefusedAndBitsPastTheLastUnitAreDamage() throws Exception {
    CodeBlock sample = StoreFixtures.sample(Randoms.seed(5));
    Path dir = tmp.resolve("idx");
    try (IndexWriter w = IndexWriter.create(dir, sample.layout(), Map.of())) {
      assertThrows(IllegalArgumentException.class,
          () -> w.add(sample.slice(0, 10), StoreFixtures.magnitudes(sample, 0, 9, 8), null));
      assertThrows(io.actindex.core.BadParameterException.class, () -> Magnitudes.quantise(new float[6], 2, 3, 3));
      w.add(sample.slice(0, 10), StoreFixtures.magnitudes(sample, 0, 10, 8), null);
    }
    List<Path> mags = StoreFixtures.files(dir).stream().filter(p -> p.toString().endsWith(".mags")).toList();
    assertEquals(1, mags.size());
    // a flipped byte inside the rows is caught by the checksum, naming the file
    try (RandomAccessFile raf = new RandomAccessFile(mags.get(0).toFile(), "rw")) {
      raf.seek(raf.length() - 20);
      int b = raf.read();
      raf.seek(raf.length() - 20);
      raf.write(b ^ 1);
    }
    BadInputException e = assertThrows(BadInputException.class, () -> IndexReader.open(dir).close());
    assertTrue(e.getMessage().contains("seg-0.mags"), e.getMessage());
  }
}
