package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.AdversarialCodes;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.core.PopcountReference;
import io.actindex.core.Randoms;
import io.actindex.index.mih.SearchPlanOptions;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.function.IntPredicate;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * An index on disk, read through {@link IndexReader} (mapped files), on inputs chosen to break its
 * search: widths around word boundaries and layouts of several layers; segments of 1 code next to
 * segments of thousands, a segment whose codes are all deleted, segments with and without a
 * partition (the plan forced or left to the planner), merged and compacted segments whose ids are
 * no longer contiguous, adds after a compaction; filters empty, of one id, of every id, of one
 * segment's ids only, overlapping the tombstones, and of deleted ids only; identical codes and a
 * few distinct codes (the k-th distance tied across segments); masks of every kind; k and radius at
 * the limits. Against {@link PopcountReference} over every code ever added (an independent {@code
 * Long.bitCount} loop; Hamming 1950), restricted to live ids and the filter.
 */
class AdversarialIndexTest {
  @TempDir Path tmp;

  @Test
  void indexSearchEqualsReferenceOnTheEdges() {
    int rep = 0;
    for (int bits : new int[] {1, 63, 65, 129, 193, 300, 513})
      for (String family : new String[] {"uniform", "identical", "fewDistinct", "halfConstant", "oneCluster"})
        run(rep++, bits, family, 600);
  }

  @Test
  @Tag("slow")
  void largerSegmentsEqualReference() {
    int rep = 3000;
    for (int bits : new int[] {127, 1000})
      for (String family : new String[] {"fewDistinct", "halfConstant", "oneCluster"}) run(rep++, bits, family, 9000);
  }

  private void run(int rep, int bits, String family, int large) {
    long seed = Randoms.seed(rep);
    SplittableRandom rnd = new SplittableRandom(seed);
    CodeLayout layout = AdversarialCodes.layout(bits, rnd);
    CodeBlock pool = AdversarialCodes.codes(family, layout, 4 * large + 40, rnd);
    SearchPlanOptions plan = switch (rnd.nextInt(3)) {
      case 0 -> SearchPlanOptions.defaults();
      case 1 -> SearchPlanOptions.defaults().withStrategy(SearchPlanOptions.Strategy.PARTITION);
      default -> SearchPlanOptions.defaults().withStrategy(SearchPlanOptions.Strategy.TABLES);
    };
    String why = Randoms.describe(seed) + " bits=" + bits + " layout=" + layout + " family=" + family + " plan=" + plan.strategy();
    Path dir = tmp.resolve("idx-" + rep);
    RoaringBitmap deleted = new RoaringBitmap();
    int used = 0;
    try (IndexWriter w = IndexWriter.create(dir, layout, Map.of()).searchPlan(plan)
        // deleted share 1: the deleted codes (an all-deleted segment among them) stay until compact, searched past
        .mergePolicy(new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, 50, 1 << 20, 1))) {
      // one code, a large batch, two codes, a middle one: segments of very different sizes
      for (int n : new int[] {1, large, 2, large / 3}) {
        w.add(pool.slice(used, used + n), null);
        used += n;
      }
      check(dir, pool, used, deleted, rnd, why + " after adds");
      // every code of the two-code segment, a third of the rest at random, and the one-code segment
      RoaringBitmap del = RoaringBitmap.bitmapOf(1 + large, 2 + large);
      for (int id = 0; id < used; id++) if (rnd.nextInt(3) == 0) del.add(id);
      w.delete(del.toArray());
      deleted.or(del);
      check(dir, pool, used, deleted, rnd, why + " after deletes");
      w.compact();
      check(dir, pool, used, deleted, rnd, why + " after compaction");
      for (int n : new int[] {1, large / 2}) {
        w.add(pool.slice(used, used + n), null);
        used += n;
      }
      RoaringBitmap more = new RoaringBitmap();
      for (int id = 0; id < used; id++) if (rnd.nextInt(10) == 0) more.add(id);
      w.delete(more.toArray());
      deleted.or(more);
      check(dir, pool, used, deleted, rnd, why + " after compaction, adds and deletes");
    }
  }

  private static void check(Path dir, CodeBlock pool, int used, RoaringBitmap deleted, SplittableRandom rnd, String why) {
    CodeBlock all = pool.slice(0, used);
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(used, r.maxId(), why);
      List<int[]> segmentIds = new ArrayList<>();
      for (IndexInfo.SegmentInfo s : r.info().segments()) segmentIds.add(new int[] {s.firstId(), s.endId()});
      for (int qi = 0; qi < 4; qi++) {
        long[] q = AdversarialCodes.query(all, rnd);
        for (String maskKind : new String[] {"none", "none", AdversarialCodes.MASKS[rnd.nextInt(AdversarialCodes.MASKS.length)]}) {
          long[] mask = AdversarialCodes.mask(maskKind, all.layout(), rnd);
          for (String filterKind : new String[] {"none", "empty", "one", "all", "oneSegment", "deletedOnly", "sparse", "half"}) {
            RoaringBitmap filter = filter(filterKind, used, deleted, segmentIds, rnd);
            IntPredicate accept = id -> !deleted.contains(id) && (filter == null || filter.contains(id));
            IdSet set = filter == null ? null : r.filter(filter.toArray());
            String what = why + " segments=" + r.info().segments().size() + " query=" + qi + " mask=" + maskKind + " filter=" + filterKind;
            for (int k : AdversarialCodes.ks(used, rnd)) {
              Hits expected = PopcountReference.knn(all, q, k, accept, mask);
              assertEquals(expected, r.search(q, k, set, mask), what + " k=" + k);
            }
            for (int radius : new int[] {-1, 0, rnd.nextInt(all.layout().bits() + 1), all.layout().bits(), Integer.MAX_VALUE})
              assertEquals(PopcountReference.radius(all, q, radius, accept, mask), r.searchRadius(q, radius, set, mask), what + " radius=" + radius);
          }
        }
      }
    }
  }

  private static RoaringBitmap filter(String kind, int n, RoaringBitmap deleted, List<int[]> segmentIds, SplittableRandom rnd) {
    RoaringBitmap f = new RoaringBitmap();
    switch (kind) {
      case "none" -> {
        return null;
      }
      case "empty" -> {}
      case "one" -> f.add(rnd.nextInt(n));
      case "all" -> f.add(0L, n);
      case "oneSegment" -> {
        int[] s = segmentIds.get(rnd.nextInt(segmentIds.size()));
        f.add((long) s[0], s[1]); // the id range of one segment (after a merge, others' ids may lie inside it)
      }
      case "deletedOnly" -> f.or(deleted);
      case "sparse", "half" -> {
        double keep = kind.equals("sparse") ? 0.02 : 0.5;
        for (int id = 0; id < n; id++) if (rnd.nextDouble() < keep) f.add(id);
      }
      default -> throw new IllegalArgumentException(kind);
    }
    return f;
  }
}
