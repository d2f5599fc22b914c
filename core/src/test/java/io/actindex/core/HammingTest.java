package io.actindex.core;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.Hamming;
import io.actindex.core.Randoms;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/** The scalar kernels of {@link Hamming}: published examples, then metric properties on 1-17 words. */
class HammingTest {

  static long[] bits(String s) {
    long[] w = new long[(s.length() + 63) / 64];
    for (int i = 0; i < s.length(); i++) if (s.charAt(i) == '1') w[i >>> 6] |= 1L << (i & 63);
    return w;
  }

  @Test
  void publishedExamples() {
    // Wikipedia, "Hamming distance", section Examples: "1011101" and "1001001" are at distance 2 (from memory).
    assertEquals(2, Hamming.distance(bits("1011101"), bits("1001001")));
    // R. W. Hamming, "Error detecting and error correcting codes", Bell System Technical Journal 29(2),
    // 1950, Section 2: a single parity check makes every pair of code words differ in at least 2
    // places. All even-weight words of length 6 (his 5 digits plus a check digit): minimum distance 2.
    int min = Integer.MAX_VALUE;
    for (int a = 0; a < 64; a++)
      for (int b = a + 1; b < 64; b++)
        if (Integer.bitCount(a) % 2 == 0 && Integer.bitCount(b) % 2 == 0)
          min = Math.min(min, Hamming.distance(new long[] {a}, new long[] {b}));
    assertEquals(2, min);
  }

  /**
   * The (7,4) single-error-correcting code of Hamming 1950 (Section 3): positions 1..7, check
   * positions 1, 2, 4; check i covers the positions whose binary index has bit i set. Its minimum
   * distance is 3 (Hamming 1950: single error correction needs minimum distance 3) and its weight
   * enumerator is 1 + 7z^3 + 7z^4 + z^7 (MacWilliams and Sloane, "The Theory of Error-Correcting
   * Codes", 1977, Chapter 1; from memory).
   */
  @Test
  void hamming74CodeHasMinimumDistanceThreeAndKnownWeights() {
    List<long[]> code = new ArrayList<>();
    for (int data = 0; data < 16; data++) {
      int[] pos = new int[8]; // 1-based
      int[] dataPos = {3, 5, 6, 7};
      for (int i = 0; i < 4; i++) pos[dataPos[i]] = data >>> i & 1;
      for (int check : new int[] {1, 2, 4}) {
        int parity = 0;
        for (int p = 1; p <= 7; p++) if ((p & check) != 0 && p != check) parity ^= pos[p];
        pos[check] = parity;
      }
      StringBuilder sb = new StringBuilder();
      for (int p = 1; p <= 7; p++) sb.append(pos[p]);
      code.add(bits(sb.toString()));
    }
    int min = Integer.MAX_VALUE;
    int[] weights = new int[8];
    long[] zero = new long[1];
    for (int i = 0; i < code.size(); i++) {
      weights[Hamming.distance(code.get(i), zero)]++;
      for (int j = i + 1; j < code.size(); j++) min = Math.min(min, Hamming.distance(code.get(i), code.get(j)));
    }
    assertEquals(3, min);
    assertEquals(List.of(1, 0, 0, 7, 7, 0, 0, 1), java.util.Arrays.stream(weights).boxed().toList());
  }

  @Test
  void metricPropertiesOnOneToSeventeenWords() {
    for (int rep = 0; rep < 400; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int words = 1 + rep % 17;
      int bitsCount = words * 64 - rnd.nextInt(64); // often not a multiple of 64
      long[] a = random(bitsCount, rnd), b = random(bitsCount, rnd), c = random(bitsCount, rnd);
      String why = Randoms.describe(seed) + " bits " + bitsCount;
      int ab = Hamming.distance(a, b), ba = Hamming.distance(b, a);
      assertEquals(0, Hamming.distance(a, a), why);
      assertEquals(ab, ba, why);
      assertTrue(Hamming.distance(a, c) <= ab + Hamming.distance(b, c), why);
      assertEquals(bitsCount, Hamming.distance(a, complement(a, bitsCount)), why);
      assertEquals(bitByBit(a, b, null, bitsCount), ab, why);
      long[] mask = random(bitsCount, rnd);
      assertEquals(bitByBit(a, b, mask, bitsCount), Hamming.maskedDistance(a, 0, b, 0, mask, words), why);
      int bound = rnd.nextInt(bitsCount + 1);
      int bounded = Hamming.distanceBounded(a, 0, b, 0, words, bound);
      if (ab <= bound) assertEquals(ab, bounded, why);
      else assertTrue(bounded > bound, why);
      // offsets: the same codes inside larger arrays
      long[] big = new long[3 * words];
      System.arraycopy(a, 0, big, words, words);
      System.arraycopy(b, 0, big, 2 * words, words);
      assertEquals(ab, Hamming.distance(big, words, big, 2 * words, words), why);
      int[] out = new int[2];
      Hamming.scan(a, 0, big, words, 1, 3, out);
      assertEquals(0, out[0], why);
      assertEquals(ab, out[1], why);
    }
  }

  static long[] random(int bitsCount, SplittableRandom rnd) {
    long[] w = new long[(bitsCount + 63) / 64];
    for (int i = 0; i < bitsCount; i++) if (rnd.nextBoolean()) w[i >>> 6] |= 1L << (i & 63);
    return w;
  }

  static long[] complement(long[] a, int bitsCount) {
    long[] c = new long[a.length];
    for (int i = 0; i < bitsCount; i++) if ((a[i >>> 6] >>> (i & 63) & 1) == 0) c[i >>> 6] |= 1L << (i & 63);
    return c;
  }

  static int bitByBit(long[] a, long[] b, long[] mask, int bitsCount) {
    int d = 0;
    for (int i = 0; i < bitsCount; i++) {
      boolean counted = mask == null || (mask[i >>> 6] >>> (i & 63) & 1) != 0;
      if (counted && ((a[i >>> 6] ^ b[i >>> 6]) >>> (i & 63) & 1) != 0) d++;
    }
    return d;
  }
}
