package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.nio.file.Path;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * Segments under a lowered size cap and automatic merges: add splits at the cap, the merge policy
 * keeps the segment count logarithmic, compaction respects the cap, and search through the mapped
 * segments equals a brute-force scan over every code ever added (minus deletes) after each change.
 */
class SegmentMergeTest {
  @TempDir Path tmp;

  @Test
  void lowCapAndMergesStayExact() {
    for (int rep = 0; rep < 4; rep++) run(rep, 30);
  }

  @Test
  @Tag("slow")
  void lowCapAndMergesStayExactManySeeds() {
    for (int rep = 100; rep < 112; rep++) run(rep, 80);
  }

  private void run(int rep, int adds) {
    long seed = Randoms.seed(rep);
    String why = Randoms.describe(seed);
    SplittableRandom rnd = new SplittableRandom(seed);
    int[] widths = {64, 128, 256, 320};
    CodeBlock pool = rep % 2 == 0
        ? SyntheticCodes.reluLike(40 * adds, 60 + rnd.nextInt(100), 30 + rnd.nextInt(60), seed).codes()
        : SyntheticCodes.uniform(40 * adds, widths[rnd.nextInt(widths.length)], seed);
    int w = pool.layout().words();
    // about 20 codes per segment at most, merges of 3, level 0 up to 4 codes
    MergePolicy policy = new MergePolicy(256 + 20 * (8L * w + 4), 3, 4);
    int cap = policy.maxCodes(w);
    assertEquals(20, cap, why);
    Path dir = tmp.resolve("idx-" + rep);
    RoaringBitmap deleted = new RoaringBitmap();
    int used = 0;
    try (IndexWriter wr = IndexWriter.create(dir, pool.layout(), Map.of()).mergePolicy(policy)) {
      for (int a = 0; a < adds; a++) {
        int n = 1 + rnd.nextInt(a % 7 == 0 ? 70 : 12);
        n = Math.min(n, pool.size() - used);
        if (n == 0) break;
        wr.add(pool.slice(used, used + n), null);
        used += n;
        if (rnd.nextInt(4) == 0) {
          RoaringBitmap del = new RoaringBitmap();
          for (int i = 0; i < 3; i++) del.add(rnd.nextInt(used));
          wr.delete(del.toArray());
          deleted.or(del);
        }
        if (a % 10 == 9) check(dir, pool, used, deleted, cap, policy, rnd, why + " after add " + a);
      }
      check(dir, pool, used, deleted, cap, policy, rnd, why + " before compaction");
      wr.compact();
      check(dir, pool, used, deleted, cap, policy, rnd, why + " after compaction");
      try (IndexReader r = IndexReader.open(dir)) {
        int live = used - deleted.getCardinality();
        assertEquals((live + cap - 1) / cap, r.info().segments().size(), why + ": compaction fills segments to the cap");
      }
    }
  }

  private static void check(Path dir, CodeBlock pool, int used, RoaringBitmap deleted, int cap, MergePolicy policy,
      SplittableRandom rnd, String why) {
    CodeBlock all = pool.slice(0, used);
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(used, r.maxId(), why);
      int segs = r.info().segments().size();
      for (IndexInfo.SegmentInfo s : r.info().segments()) assertTrue(s.count() <= cap, why + ": segment of " + s.count());
      // within the budget (2 per level of the live size), or no window of 3 fits under the cap
      int live = r.liveCount();
      int bound = Math.max(policy.budget(live), policy.mergeFactor() * (live / cap + 1));
      assertTrue(segs <= bound, why + ": " + segs + " segments for " + live + " live codes, bound " + bound);
      for (int q = 0; q < 12; q++) {
        long[] query = rnd.nextBoolean() ? all.code(rnd.nextInt(used)) : pool.code(rnd.nextInt(pool.size()));
        int k = 1 + rnd.nextInt(15);
        Hits want = BruteForce.knn(all, query, k, id -> !deleted.contains(id), null);
        assertEquals(want, r.search(query, k, null, null), why + " knn k=" + k);
        int radius = rnd.nextInt(pool.layout().bits() / 3 + 1);
        assertEquals(BruteForce.radius(all, query, radius, id -> !deleted.contains(id), null),
            r.searchRadius(query, radius, null, null), why + " radius " + radius);
      }
    }
  }
}
