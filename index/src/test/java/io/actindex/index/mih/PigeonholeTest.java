package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.Randoms;
import java.util.HashSet;
import java.util.Set;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * The facts multi-index hashing rests on. Norouzi, Punjani and Fleet, "Fast Search in Hamming
 * Space with Multi-Index Hashing", CVPR 2012, Proposition 1: if two codes differ in at most r bits,
 * then for any split into m disjoint substrings they differ in at most floor(r/m) bits on at least
 * one substring. And the refinement the kNN loop uses to grow the radius one table at a time (the
 * same paper, Section 4, r = m*rho + a): they then differ in at most rho bits on one of the first
 * a+1 substrings or in at most rho-1 bits on one of the others.
 */
class PigeonholeTest {

  @Test
  void someSubstringIsWithinTheShareOfTheRadius() {
    for (int rep = 0; rep < 3000; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int bits = 1 + rnd.nextInt(300), m = 1 + rnd.nextInt(Math.min(bits, 40));
      int[] part = randomPartition(bits, m, rnd);
      boolean[] diff = new boolean[bits];
      int d = rnd.nextInt(bits + 1);
      for (int f = 0; f < d; f++) diff[rnd.nextInt(bits)] = true;
      int[] sub = new int[m];
      int dist = 0;
      for (int b = 0; b < bits; b++)
        if (diff[b]) {
          sub[part[b]]++;
          dist++;
        }
      for (int r = dist; r <= dist + 3; r++) {
        int share = r / m, a = r % m;
        boolean plain = false, refined = false;
        for (int j = 0; j < m; j++) {
          plain |= sub[j] <= share;
          refined |= j <= a ? sub[j] <= share : sub[j] <= share - 1;
        }
        assertTrue(plain, Randoms.describe(seed) + " Proposition 1 fails for r=" + r);
        assertTrue(refined, Randoms.describe(seed) + " refined bound fails for r=" + r);
      }
    }
  }

  /** Substring index of every bit: a random balanced split. */
  static int[] randomPartition(int bits, int m, SplittableRandom rnd) {
    int[] part = new int[bits];
    for (int b = 0; b < bits; b++) part[b] = b % m;
    for (int b = bits - 1; b > 0; b--) {
      int o = rnd.nextInt(b + 1), t = part[b];
      part[b] = part[o];
      part[o] = t;
    }
    return part;
  }

  @Test
  void probesAreExactlyTheKeysAtDistanceRho() {
    for (int width = 1; width <= 14; width++)
      for (int rho = 0; rho <= width + 1; rho++) {
        Set<Long> got = new HashSet<>();
        for (long f = ProbeEnumerator.first(rho); f < ProbeEnumerator.limit(width); f = ProbeEnumerator.next(f))
          assertTrue(got.add(f), "duplicate mask " + f);
        Set<Long> want = new HashSet<>();
        for (long f = 0; f < 1L << width; f++) if (Long.bitCount(f) == rho) want.add(f);
        assertEquals(want, got, "width " + width + " rho " + rho);
        assertEquals(want.size(), (long) ProbeEnumerator.count(width, rho));
      }
  }

  @Test
  void probesOfFullWidthKeys() {
    // 32-bit keys: the last mask of each shell must stop below 2^32
    long count = 0;
    for (long f = ProbeEnumerator.first(2); f < ProbeEnumerator.limit(32); f = ProbeEnumerator.next(f)) {
      assertEquals(2, Long.bitCount(f));
      count++;
    }
    assertEquals(32 * 31 / 2, count);
    assertEquals(1, countShell(32, 32));
    assertEquals(32, countShell(32, 31));
  }

  private static long countShell(int width, int rho) {
    long c = 0;
    for (long f = ProbeEnumerator.first(rho); f < ProbeEnumerator.limit(width); f = ProbeEnumerator.next(f)) c++;
    return c;
  }
}
