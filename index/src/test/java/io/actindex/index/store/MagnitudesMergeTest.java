package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.nio.file.Path;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * Kept magnitudes follow their codes through a split at a lowered segment cap, automatic merges,
 * deletes and compaction: every live id reads back exactly (bit for bit) the row it was added
 * with, whether the batches span the same range per unit (one quantisation, rows copied) or each
 * its own (rows copied, each keeping its batch's offsets and steps), and check passes.
 */
class MagnitudesMergeTest {
  @TempDir Path tmp;

  @Test
  void magnitudesFollowSplitsMergesAndCompaction() {
    run(Randoms.seed(0), true);
  }

  @Test
  void batchesOfDifferentRangesAreNotQuantisedAgain() {
    for (int s = 1; s <= 5; s++) run(Randoms.seed(s), false);
  }

  private void run(long seed, boolean sameRange) {
    String why = Randoms.describe(seed) + (sameRange ? ", same range per batch" : ", own range per batch");
    SplittableRandom rnd = new SplittableRandom(seed);
    int n = 90, bits = 64;
    CodeBlock codes = SyntheticCodes.uniform(n, bits, seed);
    float[] values = new float[n * bits];
    for (int i = 0; i < values.length; i++)
      values[i] = sameRange ? rnd.nextInt(256) / 255f : (float) (rnd.nextDouble() * (1 + i / (30 * bits)) - 0.3 * rnd.nextDouble());
    if (sameRange)
      for (int b = 0; b < 3; b++) // rows 30b and 30b+1 hold 0 and 1 in every unit: the same range per batch
        for (int j = 0; j < bits; j++) {
          values[(30 * b) * bits + j] = 0;
          values[(30 * b + 1) * bits + j] = 1;
        }
    Path dir = tmp.resolve("idx-" + seed + "-" + sameRange);
    Magnitudes[] batches = new Magnitudes[3];
    MergePolicy policy = new MergePolicy(256 + 12 * (8L + 4), 2, 4);
    RoaringBitmap deleted = RoaringBitmap.bitmapOf(5, 33, 61, 62);
    try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of()).mergePolicy(policy)) {
      for (int b = 0; b < 3; b++) {
        batches[b] = Magnitudes.quantise(java.util.Arrays.copyOfRange(values, 30 * b * bits, 30 * (b + 1) * bits), 30, bits, 8);
        w.add(codes.slice(30 * b, 30 * (b + 1)), batches[b], null);
      }
      check(dir, batches, deleted, 0, why + " after adds");
      w.delete(deleted.toArray());
      check(dir, batches, deleted, 0, why + " after delete");
      w.compact();
      check(dir, batches, deleted, 0, why + " after compaction");
    }
    try (IndexReader r = IndexReader.open(dir)) { // else the rows above never shared a file across batches
      assertTrue(r.info().segments().stream().anyMatch(g -> g.firstId() / 30 != (g.endId() - 1) / 30),
          why + ": a compacted segment holds rows of two batches " + r.info().segments());
    }
    assertTrue(IndexCheck.run(dir).ok(), why + ": " + IndexCheck.run(dir).firstDamaged());
    if (!sameRange) flippedBytesOfMergedMagnitudesAreCaught(dir, rnd, why);
  }

  /**
   * A merged magnitudes file of several blocks (file version 2) is damage-checked like any other:
   * one flipped bit anywhere (its block count and starts included) makes opening fail or check report
   * the file, by name.
   */
  private void flippedBytesOfMergedMagnitudesAreCaught(Path dir, SplittableRandom rnd, String why) {
    java.util.List<Path> mags = StoreFixtures.files(dir).stream().filter(f -> f.getFileName().toString().endsWith(".mags")).toList();
    assertTrue(!mags.isEmpty(), why + ": a magnitudes file");
    int trial = 0;
    for (Path file : mags) {
      String rel = dir.relativize(file).toString(), name = file.getFileName().toString();
      long size = file.toFile().length();
      for (long pos : new long[] {0, 40, 60, 80, size / 2, size - 1, rnd.nextLong(size)}) {
        if (pos >= size) continue;
        Path copy = tmp.resolve(dir.getFileName() + "-damaged-" + trial++);
        StoreFixtures.copy(dir, copy);
        int bit = 1 << rnd.nextInt(8);
        try (java.io.RandomAccessFile raf = new java.io.RandomAccessFile(copy.resolve(rel).toFile(), "rw")) {
          raf.seek(pos);
          int b = raf.read();
          raf.seek(pos);
          raf.write(b ^ bit);
        } catch (java.io.IOException e) {
          throw new java.io.UncheckedIOException(e);
        }
        String where = why + ": " + rel + " byte " + pos + " bit " + bit;
        String message;
        try (IndexReader r = IndexReader.open(copy)) {
          IndexCheck.Report report = IndexCheck.run(copy);
          assertTrue(!report.ok(), where + ": neither open nor check saw the damage");
          message = report.firstDamaged().file();
        } catch (io.actindex.core.BadInputException e) {
          message = e.getMessage();
        }
        assertTrue(message.contains(name), where + ": the refusal does not name the file: " + message);
      }
    }
  }

  private static void check(Path dir, Magnitudes[] batches, RoaringBitmap deleted, int unused, String why) {
    try (IndexReader r = IndexReader.open(dir)) {
      assertTrue(r.info().segments().size() > 1 || why.contains("compaction"), why + ": split at the cap");
      float[] got = new float[64];
      for (int id = 0; id < 90; id++) {
        if (deleted.contains(id)) continue;
        assertTrue(r.magnitudes(id, got, 0), why + ": id " + id + " has magnitudes");
        assertArrayEquals(batches[id / 30].row(id % 30), got, why + ": id " + id);
      }
    }
  }
}
