package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.Randoms;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * The merge policy's choices, replayed as {@code IndexWriter} replays them after each add (the
 * batch split at the cap, then merges while {@link MergePolicy#next} names a window): the segment
 * count stays within the budget, and no run of {@code mergeFactor} adjacent segments of one size tier
 * that fits under the cap is left (size-tiered compaction: common practice), and small adds do not
 * rewrite the index over and over. Whole-index behaviour
 * (exact search across merges, crashes) is in {@link SegmentMergeTest} and {@link CrashTest}.
 */
class MergePolicyTest {
  private static final int WORDS = 4; // 256-bit codes

  @Test
  void equalBatchesMergeWithinTheBudget() {
    MergePolicy p = new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, 4, 65_536);
    // six adds of a sixth of 1M: four of one tier merge, so three segments, not the budget's six
    assertEquals(List.of(666_668L, 166_667L, 166_667L), replay(p, Collections.nCopies(6, 166_667L)));
    // ten adds of 100k (the README's and benchmarks' case)
    assertEquals(List.of(400_000L, 400_000L, 100_000L, 100_000L), replay(p, Collections.nCopies(10, 100_000L)));
  }

  @Test
  void smallAddsAreNotRewrittenOverAndOver() {
    MergePolicy p = new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, 4, 65_536);
    List<Long> live = new ArrayList<>();
    long written = 0;
    for (int a = 0; a < 1000; a++) {
      written += 1000 + add(p, live, 1000);
      assertTrue(live.size() <= p.budget(1000L * (a + 1)), "after add " + a + ": " + live);
    }
    // merging exactly four adjacent segments over the budget wrote every code 101.8 times here (replayed)
    assertTrue(written <= 20 * 1_000_000L, "codes written per code added: " + written / 1e6);
  }

  @Test
  void tiers() {
    MergePolicy p = new MergePolicy(1 << 20, 4, 65_536);
    assertEquals(0, p.tier(0));
    assertEquals(0, p.tier(3));
    assertEquals(1, p.tier(4));
    assertEquals(1, p.tier(15));
    assertEquals(2, p.tier(16));
    assertEquals(8, p.tier(166_667));
    assertEquals(9, p.tier(262_144));
  }

  @Test
  void noRunOfOneTierIsLeftAndTheBudgetHolds() {
    for (int rep = 0; rep < 200; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int factor = 2 + rnd.nextInt(4);
      MergePolicy p = new MergePolicy(256 + (1 + rnd.nextInt(5000)) * (8L * WORDS + 4), factor, 1 + rnd.nextInt(200));
      List<Long> live = new ArrayList<>();
      long total = 0;
      for (int a = 0; a < 60; a++) {
        long n = rnd.nextInt(3) == 0 ? 100 : 1 + rnd.nextInt(rnd.nextBoolean() ? 50 : 3000); // equal batches often
        total += n;
        add(p, live, n);
        String why = Randoms.describe(seed) + ", factor " + factor + ", after add " + a + ": " + live;
        assertEquals(total, live.stream().mapToLong(Long::longValue).sum(), why);
        int cap = p.maxCodes(WORDS);
        assertTrue(live.size() <= Math.max(p.budget(total), factor * (total / cap + 1)), why);
        for (int from = 0; from + factor <= live.size(); from++) {
          long sum = 0;
          boolean oneTier = true;
          for (int i = from; i < from + factor; i++) {
            sum += live.get(i);
            oneTier &= p.tier(live.get(i)) == p.tier(live.get(from));
          }
          assertTrue(!oneTier || sum > cap, why + ": a run of one tier at " + from + " is left");
        }
      }
    }
  }

  private static List<Long> replay(MergePolicy p, List<Long> batches) {
    List<Long> live = new ArrayList<>();
    for (long n : batches) add(p, live, n);
    return live;
  }

  /** One add of {@code n} codes: split at the cap, then the merges the policy asks for; the codes the merges wrote. */
  private static long add(MergePolicy p, List<Long> live, long n) {
    for (int piece : p.split((int) n, WORDS)) live.add((long) piece);
    long written = 0;
    for (int[] w = p.next(live, WORDS); w != null; w = p.next(live, WORDS)) {
      long sum = 0;
      for (int i = w[0]; i < w[1]; i++) sum += live.get(i);
      live.subList(w[0], w[1]).clear();
      live.add(w[0], sum);
      written += sum;
    }
    return written;
  }
}
