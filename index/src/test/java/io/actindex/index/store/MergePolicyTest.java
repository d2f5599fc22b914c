package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.Randoms;
import java.util.ArrayList;
import java.util.BitSet;
import java.util.Collections;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * The merge policy's choices, replayed as {@code IndexWriter} replays them after each add (the
 * batch split at the cap, then merges while {@link MergePolicy#next} names a window): the segment
 * count stays within the budget, and no run of {@code mergeFactor} adjacent segments of one size tier
 * that fits under the cap is left (size-tiered compaction: common practice), and small adds do not
 * rewrite the index over and over; a segment past the deleted share is rewritten alone, once, and
 * one all deleted disappears ({@link Life} replays adds and deletes by id). Whole-index behaviour
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

  @Test
  void aSegmentIsRewrittenOnlyPastTheDeletedShare() {
    MergePolicy p = new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, 4, 65_536); // default share 0.25
    assertNull(p.next(List.of(75L), List.of(100L), WORDS), "exactly a quarter deleted stays");
    assertArrayEquals(new int[] {0, 1}, p.next(List.of(74L), List.of(100L), WORDS), "just past a quarter");
    assertArrayEquals(new int[] {1, 2}, p.next(List.of(1000L, 74L, 1000L), List.of(1000L, 100L, 1000L), WORDS),
        "the segment alone, not its neighbours");
    assertArrayEquals(new int[] {0, 1}, p.next(List.of(0L), List.of(5L), WORDS), "all deleted");
    assertNull(p.next(List.of(1000L, 1000L), List.of(1000L, 1000L), WORDS), "nothing deleted");
    MergePolicy never = new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, 4, 65_536, 1);
    assertNull(never.next(List.of(0L), List.of(5L), WORDS), "share 1 never rewrites for deletes alone");
    MergePolicy any = new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, 4, 65_536, 0);
    assertArrayEquals(new int[] {0, 1}, any.next(List.of(999L), List.of(1000L), WORDS), "share 0: one deleted code");
    // over the budget the size windows come first, and they drop the deleted codes anyway
    MergePolicy small = new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, 2, 1);
    assertArrayEquals(new int[] {1, 3}, small.next(List.of(100L, 10L, 10L), List.of(100L, 10L, 10L), WORDS));
  }

  @Test
  void theShareComesFromItsPropertyAndABadOneIsRefusedByName() {
    String old = System.getProperty(MergePolicy.DELETED_SHARE_PROPERTY);
    try {
      System.clearProperty(MergePolicy.DELETED_SHARE_PROPERTY);
      assertEquals(MergePolicy.DEFAULT_MAX_DELETED_SHARE, MergePolicy.defaults().maxDeletedShare());
      System.setProperty(MergePolicy.DELETED_SHARE_PROPERTY, "0.4");
      assertEquals(0.4, MergePolicy.defaults().maxDeletedShare());
      System.setProperty(MergePolicy.DELETED_SHARE_PROPERTY, "a third");
      io.actindex.core.BadParameterException e = org.junit.jupiter.api.Assertions.assertThrows(
          io.actindex.core.BadParameterException.class, MergePolicy::defaults);
      assertEquals("maxDeletedShare", e.parameter());
      assertTrue(e.getMessage().contains("'a third'"), e.getMessage());
    } finally {
      if (old == null) System.clearProperty(MergePolicy.DELETED_SHARE_PROPERTY);
      else System.setProperty(MergePolicy.DELETED_SHARE_PROPERTY, old);
    }
  }

  @Test
  void anAllDeletedSegmentDisappearsAndNothingLoops() {
    Life life = new Life(new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, 4, 65_536), true);
    life.add(1000);
    life.add(1000);
    life.delete(java.util.stream.IntStream.range(1000, 2000).toArray());
    assertEquals(List.of(1000L), life.stored(), "the all-deleted segment is gone");
    assertEquals(2000, life.written, "and nothing was written for it");
    life.delete(java.util.stream.IntStream.range(0, 250).toArray());
    assertEquals(List.of(1000L), life.stored(), "a quarter deleted is kept");
    life.delete(new int[] {250});
    assertEquals(List.of(749L), life.stored(), "past a quarter: rewritten once");
    assertEquals(2749, life.written);
  }

  @Test
  void aRewriteRespectsALoweredCap() {
    MergePolicy wide = new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, 4, 65_536);
    Life life = new Life(wide, true);
    life.add(10_000);
    MergePolicy narrow = new MergePolicy(256 + 3000 * (8L * WORDS + 4), 4, 65_536); // a cap of 3,000 codes
    life.p = narrow;
    life.delete(java.util.stream.IntStream.range(0, 3000).toArray());
    assertEquals(List.of(2333L, 2333L, 2334L), life.stored(), "split at the cap");
    for (long s : life.stored()) assertTrue(s <= narrow.maxCodes(WORDS));
  }

  /**
   * Random lives of adds and deletes under small random policies: after every change the segments
   * are within the cap, none is past the deleted share, none is empty, and every merge the policy
   * asks for removes a segment or a deleted code (so it cannot loop).
   */
  @Test
  void randomLivesKeepEverySegmentBelowTheShare() {
    for (int rep = 0; rep < 100; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      double share = rnd.nextInt(4) == 0 ? 0 : rnd.nextDouble();
      MergePolicy p = new MergePolicy(256 + (1 + rnd.nextInt(3000)) * (8L * WORDS + 4), 2 + rnd.nextInt(4), 1 + rnd.nextInt(200), share);
      Life life = new Life(p, true);
      for (int step = 0; step < 60; step++) {
        String why = Randoms.describe(seed) + ", share " + share + ", after step " + step + ": stored " + life.stored() + ", live " + life.live();
        if (life.liveCount() == 0 || rnd.nextBoolean()) life.add(1 + rnd.nextInt(rnd.nextBoolean() ? 50 : 2000));
        else life.delete(life.randomLive(rnd, 1 + rnd.nextInt(Math.max(1, life.liveCount() / (1 + rnd.nextInt(4))))));
        for (int i = 0; i < life.segs.size(); i++) {
          long stored = life.segs.get(i).length, live = life.live().get(i);
          assertTrue(stored > 0 && stored <= p.maxCodes(WORDS), why);
          assertTrue(!p.tooManyDeleted(live, stored), why + ": segment " + i + " is past the share");
        }
      }
    }
  }

  /**
   * A year of a busy index, replayed: 1M codes built as one segment, then 100 rounds of deleting 1%
   * of the live codes at random and adding 1% new. Before (merges after adds only, windows by live
   * codes), the built segment is never merged and keeps its deleted codes; with merges after
   * deletes and the default share, no segment passes a quarter. Prints what docs/benchmarks.md
   * quotes ("Deleted codes rewritten"); share 1 and merges after adds only is the old policy.
   */
  @Test
  void aLifeOfDeletesAndAddsBeforeAndAfter() {
    Life before = life(1, false), after = life(MergePolicy.DEFAULT_MAX_DELETED_SHARE, true);
    assertTrue(before.maxShare > 0.3, "the old policy left " + before.maxShare + " deleted");
    assertTrue(after.maxShare <= MergePolicy.DEFAULT_MAX_DELETED_SHARE, "the rule left " + after.maxShare + " deleted");
    assertTrue(after.written < 2 * before.written, "writes: " + after.written + " against " + before.written);
    for (double share : new double[] {0.1, 0.2, 1 / 3.0, 0.5}) life(share, true);
  }

  private static Life life(double share, boolean mergeAfterDelete) {
    MergePolicy p = new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, MergePolicy.DEFAULT_MERGE_FACTOR,
        MergePolicy.DEFAULT_FLOOR_CODES, share);
    Life life = new Life(p, mergeAfterDelete);
    SplittableRandom rnd = new SplittableRandom(0x11FEL);
    life.add(1_000_000);
    for (int round = 0; round < 100; round++) {
      life.delete(life.randomLive(rnd, life.liveCount() / 100));
      life.add(10_000);
    }
    System.out.printf(java.util.Locale.ROOT, "life: share %.3f, merges after deletes %s: codes written per live code %.2f, "
        + "max deleted share %.3f, %d segments, stored %s, live %s%n", share, mergeAfterDelete,
        (double) life.written / life.liveCount(), life.maxShare, life.segs.size(), life.stored(), life.live());
    return life;
  }

  /**
   * An index's segments replayed by id, as {@code IndexWriter} keeps them: ascending ids per segment,
   * the deleted ids, the codes written by adds and merges, and the largest deleted share a segment
   * had after any change.
   */
  static final class Life {
    MergePolicy p;
    final boolean mergeAfterDelete;
    final List<int[]> segs = new ArrayList<>();
    final List<Integer> dead = new ArrayList<>(); // deleted codes per segment
    final BitSet deleted = new BitSet();
    int nextId;
    long written;
    double maxShare;

    Life(MergePolicy p, boolean mergeAfterDelete) {
      this.p = p;
      this.mergeAfterDelete = mergeAfterDelete;
    }

    void add(int n) {
      for (int piece : p.split(n, WORDS)) {
        segs.add(java.util.stream.IntStream.range(nextId, nextId + piece).toArray());
        dead.add(0);
        nextId += piece;
        written += piece;
      }
      mergeAndRecord(true);
    }

    void delete(int[] ids) {
      for (int id : ids) {
        if (deleted.get(id) || id >= nextId) continue;
        deleted.set(id);
        int lo = 0, hi = segs.size() - 1; // the last segment whose first id is at most id
        while (lo < hi) {
          int mid = (lo + hi + 1) >>> 1;
          if (segs.get(mid)[0] <= id) lo = mid;
          else hi = mid - 1;
        }
        if (!segs.isEmpty() && java.util.Arrays.binarySearch(segs.get(lo), id) >= 0) dead.set(lo, dead.get(lo) + 1);
      }
      mergeAndRecord(mergeAfterDelete);
    }

    /** {@code count} distinct live ids at random. */
    int[] randomLive(SplittableRandom rnd, int count) {
      BitSet picked = new BitSet();
      for (int c = 0; c < count; ) {
        int id = rnd.nextInt(nextId);
        if (!deleted.get(id) && !picked.get(id)) {
          picked.set(id);
          c++;
        }
      }
      return picked.stream().toArray();
    }

    private void mergeAndRecord(boolean merge) {
      for (int[] w; merge && (w = p.next(live(), stored(), WORDS)) != null; ) {
        long segsBefore = segs.size(), deadBefore = dead.stream().mapToLong(Integer::longValue).sum();
        int[] kept = segs.subList(w[0], w[1]).stream().flatMapToInt(java.util.Arrays::stream).filter(id -> !deleted.get(id)).toArray();
        segs.subList(w[0], w[1]).clear();
        dead.subList(w[0], w[1]).clear();
        int at = 0, pos = w[0];
        for (int len : kept.length == 0 ? List.<Integer>of() : p.split(kept.length, WORDS)) {
          segs.add(pos, java.util.Arrays.copyOfRange(kept, at, at + len));
          dead.add(pos++, 0);
          at += len;
        }
        written += kept.length;
        long deadAfter = dead.stream().mapToLong(Integer::longValue).sum();
        assertTrue(segs.size() < segsBefore || deadAfter < deadBefore, "merge " + java.util.Arrays.toString(w) + " changed nothing");
      }
      for (int i = 0; i < segs.size(); i++) maxShare = Math.max(maxShare, (double) dead.get(i) / segs.get(i).length);
    }

    List<Long> stored() {
      List<Long> out = new ArrayList<>();
      for (int[] s : segs) out.add((long) s.length);
      return out;
    }

    List<Long> live() {
      List<Long> out = new ArrayList<>();
      for (int i = 0; i < segs.size(); i++) out.add((long) segs.get(i).length - dead.get(i));
      return out;
    }

    int liveCount() {
      return nextId - deleted.cardinality();
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
    for (int[] w = p.next(live, live, WORDS); w != null; w = p.next(live, live, WORDS)) {
      long sum = 0;
      for (int i = w[0]; i < w[1]; i++) sum += live.get(i);
      live.subList(w[0], w[1]).clear();
      live.add(w[0], sum);
      written += sum;
    }
    return written;
  }
}
