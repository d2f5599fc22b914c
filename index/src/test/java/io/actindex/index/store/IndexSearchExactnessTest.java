package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.function.IntPredicate;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * Multi-segment search through {@link IndexReader} equals a brute-force scan over every code ever
 * added (ids = positions), restricted to live ids and the filter: several segments, deletes,
 * filters, masks, before and after compaction and after reopening.
 */
class IndexSearchExactnessTest {
  @TempDir Path tmp;

  /** Segments whose searcher uses hash tables (so the multi-index path, not only the scan, is checked). */
  private int tableSegments;

  @Test
  void multiSegmentSearchEqualsBruteForce() {
    for (int rep = 0; rep < 8; rep++) run(rep, 4);
    assertTrue(tableSegments > 0, "no segment used hash tables");
  }

  @Test
  @Tag("slow")
  void multiSegmentSearchEqualsBruteForceManySeeds() {
    for (int rep = 100; rep < 124; rep++) run(rep, 6);
  }

  /**
   * Segments large enough for a partition (dense ReLU codes), searched largest first with the shared
   * k-th distance: filters of 0.5% (walked), 30% and all, one tombstone and 30% deleted, masks.
   */
  @Test
  void partitionedSegmentsShareTheBound() throws java.io.IOException {
    long seed = Randoms.seed(500);
    String why = Randoms.describe(seed);
    SplittableRandom rnd = new SplittableRandom(seed);
    SyntheticCodes.ReluNet net = SyntheticCodes.ReluNet.dense(32, 64, 64, 20, seed);
    CodeBlock all = net.sample(4_200 + 5_000 + 4_500, 0, seed + 1).codes();
    Path dir = tmp.resolve("partitioned");
    RoaringBitmap deleted = new RoaringBitmap();
    // deleted share 1: the 30% deleted stay in the partitioned segments, searched past
    MergePolicy keepDeleted = new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, MergePolicy.DEFAULT_MERGE_FACTOR,
        MergePolicy.DEFAULT_FLOOR_CODES, 1);
    try (IndexWriter w = IndexWriter.create(dir, all.layout(), Map.of()).mergePolicy(keepDeleted)) {
      w.add(all.slice(0, 4_200), null);
      w.add(all.slice(4_200, 9_200), null);
      w.add(all.slice(9_200, all.size()), null);
      for (int round = 0; round < 3; round++) {
        try (IndexReader r = IndexReader.open(dir)) {
          CodeBlock queries = net.sample(8, round == 2 ? 3 : 0, seed + 2 + round).codes();
          for (int i = 0; i < queries.size(); i++) {
            long[] q = queries.code(i);
            double share = new double[] {0.005, 0.3, 1}[i % 3];
            RoaringBitmap f = new RoaringBitmap();
            for (int id = 0; id < all.size(); id++) if (rnd.nextDouble() < share) f.add(id);
            io.actindex.core.IdSet filter = share == 1 ? null : r.filter(f.toArray());
            IntPredicate accept = id -> !deleted.contains(id) && (share == 1 || f.contains(id));
            long[] mask = i == 7 ? all.layout().mask(1) : null;
            for (int k : new int[] {1, 10, 100}) {
              String what = why + " round " + round + " query " + i + " share " + share + " k=" + k;
              assertEquals(BruteForce.knn(all, q, k, accept, mask), r.search(q, k, filter, mask), what);
            }
            assertEquals(BruteForce.radius(all, q, 30, accept, mask), r.searchRadius(q, 30, filter, mask), why);
          }
          assertEquals(Hits.EMPTY, r.search(queries.code(0), 10, r.filter(), null), why);
        }
        RoaringBitmap del = new RoaringBitmap();
        if (round == 0) del.add(rnd.nextInt(all.size()));
        else for (int id = 0; id < all.size(); id++) if (rnd.nextInt(10) < 3) del.add(id);
        w.delete(del.toArray());
        deleted.or(del);
      }
    }
  }

  /**
   * A few deleted or filtered-out ids (so few that the search first runs without asking the filter,
   * and repeats with it when an answer is rejected): the deleted ids are the codes the queries copy
   * and their duplicates, so their nearest codes are rejected and the search must repeat, and other
   * queries whose answers are all accepted end after the first pass. Dense and skewed ReLU-like codes
   * (partitions and tables) and uniform ones, two segments, k = 1, 10, 100, against brute force.
   */
  @Test
  void fewRejectedIdsEqualBruteForce() {
    for (int rep = 0; rep < 6; rep++) {
      long seed = Randoms.seed(600 + rep);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeBlock all = switch (rep % 3) {
        case 0 -> SyntheticCodes.ReluNet.dense(32, 64, 64, 20, seed).sample(12_000, 0, seed + 1).codes();
        case 1 -> SyntheticCodes.reluLike(12_000, 96, 64, seed).codes();
        default -> SyntheticCodes.uniform(12_000, 128, seed);
      };
      all = all.concat(all.slice(0, 300)); // duplicates: a rejected code tied with an accepted one of a larger id
      Path dir = tmp.resolve("few-" + rep);
      int n = all.size();
      int[] copied = new int[12];
      for (int i = 0; i < copied.length; i++) copied[i] = rnd.nextInt(i % 2 == 0 ? 300 : n);
      RoaringBitmap deleted = RoaringBitmap.bitmapOf(copied[0], copied[1], copied[2], copied[3]);
      try (IndexWriter w = IndexWriter.create(dir, all.layout(), Map.of())) {
        w.add(all.slice(0, 7_000), null);
        w.add(all.slice(7_000, n), null);
        w.delete(deleted.toArray());
      }
      try (IndexReader r = IndexReader.open(dir)) {
        RoaringBitmap out = RoaringBitmap.bitmapOf(copied[4], copied[5]); // a filter of every id but two
        io.actindex.core.IdSet allButTwo = r.filter(RoaringBitmap.andNot(RoaringBitmap.bitmapOf(java.util.stream.IntStream.range(0, n).toArray()), out).toArray());
        for (int i = 0; i < copied.length; i++) {
          long[] q = all.code(copied[i]);
          if (i >= 8) q = flip(q, rnd, all.layout().bits());
          for (int k : new int[] {1, 10, 100}) {
            String what = why + " query " + i + " (copy of id " + copied[i] + ") k=" + k;
            assertEquals(BruteForce.knn(all, q, k, id -> !deleted.contains(id), null), r.search(q, k, null, null), what);
            assertEquals(BruteForce.knn(all, q, k, id -> !deleted.contains(id) && !out.contains(id), null), r.search(q, k, allButTwo, null),
                what + " filtered");
          }
        }
      }
    }
  }

  /**
   * Queries that land on deleted codes (each a copy of one) make every first pass without the filter
   * repeat: the reader stops trying first passes after a few dozen, and still answers exactly; a
   * reader whose queries miss the deleted codes keeps trying them.
   */
  @Test
  void firstPassesStopWhenTheyKeepRepeating() {
    long seed = Randoms.seed(700);
    String why = Randoms.describe(seed);
    SplittableRandom rnd = new SplittableRandom(seed);
    CodeBlock all = SyntheticCodes.uniform(20_000, 64, seed);
    int[] del = new int[20];
    for (int i = 0; i < del.length; i++) del[i] = rnd.nextInt(all.size());
    RoaringBitmap deleted = RoaringBitmap.bitmapOf(del);
    Path dir = tmp.resolve("repeats");
    try (IndexWriter w = IndexWriter.create(dir, all.layout(), Map.of())) {
      w.add(all, null);
      w.delete(del);
    }
    try (IndexReader hit = IndexReader.open(dir); IndexReader miss = IndexReader.open(dir)) {
      for (int i = 0; i < 200; i++) {
        long[] onDeleted = all.code(del[i % del.length]), elsewhere = all.code(rnd.nextInt(all.size()));
        assertEquals(BruteForce.knn(all, onDeleted, 1, id -> !deleted.contains(id), null), hit.search(onDeleted, 1, null, null), why + " " + i);
        assertEquals(BruteForce.knn(all, elsewhere, 1, id -> !deleted.contains(id), null), miss.search(elsewhere, 1, null, null), why + " " + i);
      }
      assertTrue(!hit.defersFilter(), why + ": first passes still tried after 200 repeats");
      assertTrue(miss.defersFilter(), why + ": first passes stopped for queries that rarely land on a deleted code");
    }
  }

  /**
   * Deletes past the deleted share rewrite the segment without its deleted codes, at once (the
   * delete's own call), and one whose every code is deleted disappears: ids, codes, keys and labels
   * stay as they were, searches equal brute force over the live codes after each step, and no
   * segment is ever left past the share. Segments of 60-300 codes, uniform and ReLU-like, many seeds.
   */
  @Test
  void deletesPastTheShareRewriteTheSegmentAndStayExact() {
    for (int rep = 0; rep < 8; rep++) {
      long seed = Randoms.seed(800 + rep);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeBlock pool = rep % 2 == 1 ? SyntheticCodes.reluLike(1200, 40 + rnd.nextInt(120), 20 + rnd.nextInt(80), seed).codes()
          : SyntheticCodes.uniform(1200, new int[] {64, 100, 256}[rnd.nextInt(3)], seed);
      // a merge factor of 50: each add stays its own segment, only the deleted share rewrites
      MergePolicy policy = new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, 50, 1 << 20);
      Path dir = tmp.resolve("share-" + rep);
      CodeBlock all = new CodeBlock(pool.layout(), 0, new long[0]);
      List<String> labels = new ArrayList<>();
      RoaringBitmap deleted = new RoaringBitmap();
      try (IndexWriter w = IndexWriter.create(dir, pool.layout(), Map.of()).mergePolicy(policy)) {
        for (int b = 0; b < 4; b++) {
          int n = 60 + rnd.nextInt(240);
          List<Map<String, String>> rows = new ArrayList<>();
          for (int i = 0; i < n; i++) {
            labels.add("c" + rnd.nextInt(3));
            rows.add(Map.of("key", "k" + (all.size() + i), "label", labels.getLast()));
          }
          w.add(pool.slice(all.size(), all.size() + n), rows);
          all = all.concat(pool.slice(all.size(), all.size() + n));
        }
        // a few ids at a time from one segment until it passes the share, then all of another
        IndexInfo.SegmentInfo target = segmentOf(dir, rnd.nextInt(all.size()));
        for (int step = 0; segmentOf(dir, target.firstId()) != null
            && segmentOf(dir, target.firstId()).segmentId() == target.segmentId(); step++) {
          RoaringBitmap del = new RoaringBitmap();
          for (int i = 0; i < 1 + rnd.nextInt(Math.max(1, target.count() / 12)); i++) del.add(target.firstId() + rnd.nextInt(target.count()));
          w.delete(del.toArray());
          deleted.or(del);
          assertTrue(step < target.count(), why + ": segment " + target + " never rewritten");
          checkShares(dir, policy, deleted, why + " step " + step);
          check(dir, all, labels, deleted, rnd, why + " step " + step);
        }
        IndexInfo.SegmentInfo rewritten = segmentOf(dir, RoaringBitmap.andNot(RoaringBitmap.bitmapOf(
            java.util.stream.IntStream.range(target.firstId(), target.endId()).toArray()), deleted).first());
        assertEquals(0, rewritten.deleted(), why + ": the rewrite keeps no deleted code");
        int segments = w.segmentCount();
        IndexInfo.SegmentInfo gone = segmentOf(dir, target.firstId() == 0 ? target.endId() : 0);
        w.delete(java.util.stream.IntStream.range(gone.firstId(), gone.endId()).toArray());
        deleted.add((long) gone.firstId(), (long) gone.endId());
        assertEquals(segments - 1, w.segmentCount(), why + ": the segment whose every code is deleted is gone");
        checkShares(dir, policy, deleted, why + " all of a segment deleted");
        check(dir, all, labels, deleted, rnd, why + " all of a segment deleted");
      }
    }
  }

  /** The segment that stores {@code id}, or null. */
  private static IndexInfo.SegmentInfo segmentOf(Path dir, int id) {
    try (IndexReader r = IndexReader.open(dir)) {
      return r.info().segments().stream().filter(s -> s.firstId() <= id && id < s.endId()).findFirst().orElse(null);
    }
  }

  /** No segment past the share; every live key names its id, no deleted one names any. */
  private static void checkShares(Path dir, MergePolicy policy, RoaringBitmap deleted, String why) {
    try (IndexReader r = IndexReader.open(dir)) {
      for (IndexInfo.SegmentInfo s : r.info().segments())
        assertTrue(s.count() > 0 && s.deleted() <= policy.maxDeletedShare() * s.count(), why + ": segment " + s + " past the share");
      for (int id = 0; id < r.maxId(); id++) assertEquals(deleted.contains(id) ? -1 : id, r.meta().idOfKey("k" + id), why + " key k" + id);
    }
  }

  private void run(int rep, int batches) {
    long seed = Randoms.seed(rep);
    String why = Randoms.describe(seed);
    SplittableRandom rnd = new SplittableRandom(seed);
    boolean relu = rep % 2 == 1;
    int[] widths = {64, 100, 128, 256, 1024, 2048};
    CodeBlock pool = relu
        ? SyntheticCodes.reluLike(120 * batches, 40 + rnd.nextInt(120), 20 + rnd.nextInt(80), seed).codes()
        : SyntheticCodes.uniform(120 * batches, widths[rnd.nextInt(widths.length)], seed);
    Path dir = tmp.resolve("idx-" + rep);
    CodeBlock all = new CodeBlock(pool.layout(), 0, new long[0]);
    List<String> labels = new ArrayList<>();
    RoaringBitmap deleted = new RoaringBitmap();
    try (IndexWriter w = IndexWriter.create(dir, pool.layout(), Map.of("seed", why))) {
      int used = 0;
      for (int b = 0; b < batches; b++) {
        int n = rnd.nextInt(121);
        CodeBlock batch = pool.slice(used, used + n);
        used += n;
        List<Map<String, String>> rows = new ArrayList<>();
        for (int i = 0; i < n; i++) {
          String label = "c" + rnd.nextInt(3);
          labels.add(label);
          Map<String, String> row = new HashMap<>();
          row.put("label", label);
          rows.add(row);
        }
        assertEquals(all.size(), w.add(batch, rows), why);
        all = all.concat(batch);
        if (all.size() > 0 && rnd.nextInt(3) == 0) {
          RoaringBitmap del = new RoaringBitmap();
          for (int i = 0; i < 1 + rnd.nextInt(20); i++) del.add(rnd.nextInt(all.size()));
          RoaringBitmap fresh = RoaringBitmap.andNot(del, deleted);
          assertEquals(fresh.getCardinality(), w.delete(del.toArray()), why);
          deleted.or(del);
        }
        if (b == batches / 2 || rnd.nextInt(4) == 0) check(dir, all, labels, deleted, rnd, why);
      }
      check(dir, all, labels, deleted, rnd, why);
      w.compact();
      check(dir, all, labels, deleted, rnd, why);
      if (all.size() > 0) {
        RoaringBitmap del = RoaringBitmap.bitmapOf(rnd.nextInt(all.size()));
        w.delete(del.toArray());
        deleted.or(del);
      }
    }
    check(dir, all, labels, deleted, rnd, why);
  }

  private void check(Path dir, CodeBlock all, List<String> labels, RoaringBitmap deleted, SplittableRandom rnd,
      String why) {
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(all.size(), r.maxId(), why);
      for (IndexInfo.SegmentInfo s : r.info().segments()) if (s.substrings() > 0) tableSegments++;
      assertEquals(all.size() - deleted.getCardinality(), r.liveCount(), why);
      int[] ids = new int[r.liveCount()];
      CodeBlock live = r.liveCodes(ids);
      int j = 0;
      for (int id = 0; id < all.size(); id++) {
        if (deleted.contains(id)) continue;
        assertEquals(id, ids[j], why);
        assertArrayEquals(all.code(id), live.code(j), why);
        assertArrayEquals(all.code(id), r.code(id), why);
        j++;
      }
      int bits = all.layout().bits();
      for (int q = 0; q < 6; q++) {
        long[] query = all.size() > 0 && rnd.nextBoolean()
            ? flip(all.code(rnd.nextInt(all.size())), rnd, bits)
            : SyntheticCodes.uniform(1, bits, rnd.nextLong()).code(0);
        RoaringBitmap filter = null;
        String label = "c" + rnd.nextInt(3);
        if (q % 3 == 1) {
          filter = RoaringBitmap.bitmapOf(r.meta().selectEqual("label", label).toArray());
          RoaringBitmap expected = new RoaringBitmap();
          for (int id = 0; id < all.size(); id++) if (labels.get(id).equals(label) && !deleted.contains(id)) expected.add(id);
          assertEquals(expected, filter, why);
        } else if (q % 3 == 2) {
          filter = new RoaringBitmap();
          for (int id = 0; id < all.size(); id++) if (rnd.nextInt(3) == 0) filter.add(id);
        }
        long[] mask = q == 5 && all.layout().segments().size() > 1 ? all.layout().mask(1) : null;
        RoaringBitmap f = filter;
        IntPredicate accept = id -> !deleted.contains(id) && (f == null || f.contains(id));
        io.actindex.core.IdSet set = f == null ? null : r.filter(f.toArray());
        for (int k : new int[] {1, 10, 100}) {
          Hits expected = BruteForce.knn(all, query, k, accept, mask);
          assertEquals(expected, r.search(query, k, set, mask), why + " k=" + k);
        }
        int radius = rnd.nextInt(bits + 2);
        if (rnd.nextBoolean() && all.size() > 0) radius = BruteForce.knn(all, query, 1 + rnd.nextInt(20), accept, mask).size() > 0
            ? lastDist(BruteForce.knn(all, query, 1 + rnd.nextInt(20), accept, mask)) : 0;
        assertEquals(BruteForce.radius(all, query, radius, accept, mask), r.searchRadius(query, radius, set, mask),
            why + " r=" + radius);
      }
    }
  }

  private static int lastDist(Hits h) {
    return h.dist(h.size() - 1);
  }

  private static long[] flip(long[] code, SplittableRandom rnd, int bits) {
    for (int i = rnd.nextInt(6); i > 0; i--) {
      int b = rnd.nextInt(bits);
      code[b >>> 6] ^= 1L << (b & 63);
    }
    return code;
  }
}
