package io.actindex.core;

import static org.junit.jupiter.api.Assertions.assertEquals;

import java.util.Arrays;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * {@link TopK} against a sort of everything offered: the kept pairs, ties by ordinal, {@link
 * TopK#countWithin}, and a {@link TopK#copy} that stays as it was while the original goes on.
 */
class TopKTest {

  @Test
  void keepsTheKSmallestAndCountsThoseWithinADistance() {
    for (int rep = 0; rep < 200; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int k = 1 + rnd.nextInt(rnd.nextBoolean() ? 8 : 200), n = rnd.nextInt(600), maxDist = 1 + rnd.nextInt(12);
      TopK top = new TopK(k);
      long[] all = new long[n];
      int[] ords = Randoms.permutation(n, rnd); // each ordinal once, in any order
      TopK half = null;
      Hits atHalf = null;
      for (int i = 0; i < n; i++) {
        if (i == n / 2) {
          half = top.copy();
          atHalf = top.toHits();
        }
        int d = rnd.nextInt(maxDist);
        all[i] = (long) d << 32 | ords[i];
        top.offer(ords[i], d);
      }
      if (half != null) assertEquals(atHalf, half.toHits(), Randoms.describe(seed) + ": the copy moved with the original");
      Arrays.sort(all);
      long[] kept = Arrays.copyOf(all, Math.min(k, n));
      Hits h = top.toHits();
      String why = Randoms.describe(seed) + " k=" + k + " n=" + n;
      assertEquals(kept.length, h.size(), why);
      for (int i = 0; i < kept.length; i++) {
        assertEquals((int) kept[i], h.ord(i), why + " at " + i);
        assertEquals((int) (kept[i] >>> 32), h.dist(i), why + " at " + i);
      }
      for (int d = -1; d <= maxDist; d++) {
        int expected = 0;
        for (long x : kept) if ((x >>> 32) <= d) expected++;
        assertEquals(expected, top.countWithin(d), why + " within " + d);
      }
    }
  }
}
