package io.actindex.query.report;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.mih.DistinctCodes;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * {@link IndexReport#nearestOther} (grouped searches over the partition, or one search per code)
 * on one thread and on several against a plain loop over every pair: uniform codes (short ones,
 * where the tables win, and long ones) and skewed ReLU-like codes of 64 to 288 bits, from a few
 * codes to more than a partition needs (4,096 distinct codes) and than the vector loops need
 * (20,000), with exact copies planted (distance 0), near copies (ties at small distances) and a
 * crowd of one code.
 */
class NearestOtherTest {
  @Test
  void everyThreadCountGivesTheBruteForceDistances() {
    for (int rep = 0; rep < 26; rep++) {
      long seed = Randoms.seed(rep);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      // past 20,000 distinct codes (after the copies) the groups run the Vector API loops where the JVM has them
      int n = rep >= 24 ? 28_000 + rnd.nextInt(1000) : rep % 3 == 0 ? 1 + rnd.nextInt(3000) : 4500 + rnd.nextInt(3500);
      CodeBlock codes = switch (rep >= 24 ? 2 : rep % 4) {
        case 0 -> SyntheticCodes.uniform(n, 16 + rnd.nextInt(100), seed);
        case 1 -> SyntheticCodes.uniform(n, 200 + rnd.nextInt(300), seed);
        default -> rep >= 24 ? SyntheticCodes.reluLike(n, 96 + rnd.nextInt(32), 96 + rnd.nextInt(32), seed).codes()
            : SyntheticCodes.reluLike(n, 32 + rnd.nextInt(100), 32 + rnd.nextInt(100), seed).codes();
      };
      codes = withCopies(codes, rnd);
      if (rep >= 24) assertEquals(true, DistinctCodes.of(codes).count() >= 20_000, why + " enough distinct codes for the vector loops");
      int[] expected = bruteForce(codes);
      List<long[]> updates = new ArrayList<>();
      assertArrayEquals(expected, IndexReport.nearestOther(codes, null), why + " threads 1, n " + n);
      for (int threads : rep >= 24 ? new int[] {2} : new int[] {2, 3, 7}) {
        updates.clear();
        int[] got = IndexReport.nearestOther(codes, threads, (done, total) -> updates.add(new long[] {done, total}));
        assertArrayEquals(expected, got, why + " threads " + threads + ", n " + n);
        assertEquals(n, updates.get(updates.size() - 1)[0], why + " the last progress update counts every code");
        for (int i = 1; i < updates.size(); i++)
          assertEquals(true, updates.get(i)[0] > updates.get(i - 1)[0], why + " progress only grows");
      }
    }
  }

  @Test
  void oneCodeHasNoOther() {
    CodeBlock one = SyntheticCodes.uniform(1, 40, 3);
    assertArrayEquals(new int[] {-1}, IndexReport.nearestOther(one, 4, null));
    assertArrayEquals(new int[0], IndexReport.nearestOther(SyntheticCodes.uniform(0, 40, 3), 4, null));
    CodeBlock two = SyntheticCodes.uniform(2, 40, 3);
    long[] same = two.words().clone();
    same[1] = same[0];
    assertArrayEquals(new int[] {0, 0}, IndexReport.nearestOther(new CodeBlock(two.layout(), 2, same), 2, null));
  }

  /**
   * A tenth of the codes overwritten with copies of others (distance 0 to another), a tenth with
   * copies that differ in one to three random bits (ties at small distances), and one code copied
   * over a twentieth of the codes.
   */
  private static CodeBlock withCopies(CodeBlock codes, SplittableRandom rnd) {
    int n = codes.size(), w = codes.wordsPerCode(), bits = codes.layout().bits();
    long[] words = codes.words().clone();
    if (n == 0) return codes;
    for (int c = 0; c < n / 10; c++) System.arraycopy(words, rnd.nextInt(n) * w, words, rnd.nextInt(n) * w, w);
    for (int c = 0; c < n / 10; c++) {
      int to = rnd.nextInt(n);
      System.arraycopy(words, rnd.nextInt(n) * w, words, to * w, w);
      for (int f = 1 + rnd.nextInt(3); f > 0; f--) {
        int b = rnd.nextInt(bits);
        words[to * w + (b >>> 6)] ^= 1L << (b & 63);
      }
    }
    int crowd = rnd.nextInt(n);
    for (int c = 0; c < n / 20; c++) System.arraycopy(words, crowd * w, words, rnd.nextInt(n) * w, w);
    return new CodeBlock(codes.layout(), n, words);
  }

  private static int[] bruteForce(CodeBlock codes) {
    int n = codes.size(), w = codes.wordsPerCode();
    long[] x = codes.words();
    int[] out = new int[n];
    for (int i = 0; i < n; i++) {
      int best = -1;
      for (int j = 0; j < n; j++) {
        if (j == i) continue;
        int d = 0;
        for (int q = 0; q < w; q++) d += Long.bitCount(x[i * w + q] ^ x[j * w + q]);
        if (best < 0 || d < best) best = d;
      }
      out[i] = best;
    }
    return out;
  }
}
