package io.actindex.query.report;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * {@link IndexReport#nearestOther} on one thread and on several (workers taking blocks of codes
 * from a shared searcher) against a plain loop over every pair, on uniform and ReLU-like codes with
 * exact copies planted, and a block count that does not divide the codes.
 */
class NearestOtherTest {
  @Test
  void everyThreadCountGivesTheBruteForceDistances() {
    for (int rep = 0; rep < 8; rep++) {
      long seed = Randoms.seed(rep);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = 1 + rnd.nextInt(3 * IndexReport.BLOCK + 100);
      CodeBlock codes = rep % 2 == 0 ? SyntheticCodes.uniform(n, 16 + rnd.nextInt(100), seed)
          : SyntheticCodes.reluLike(n, 64, 32, seed).codes();
      codes = withCopies(codes, rnd);
      int[] expected = bruteForce(codes);
      List<long[]> updates = new ArrayList<>();
      assertArrayEquals(expected, IndexReport.nearestOther(codes, null), why + " threads 1");
      for (int threads : new int[] {2, 3, 7}) {
        updates.clear();
        int[] got = IndexReport.nearestOther(codes, threads, (done, total) -> updates.add(new long[] {done, total}));
        assertArrayEquals(expected, got, why + " threads " + threads);
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
  }

  /** A tenth of the codes overwritten with copies of others (distance 0 to another). */
  private static CodeBlock withCopies(CodeBlock codes, SplittableRandom rnd) {
    int n = codes.size(), w = codes.wordsPerCode();
    long[] words = codes.words().clone();
    for (int c = 0; c < n / 10; c++) System.arraycopy(words, rnd.nextInt(n) * w, words, rnd.nextInt(n) * w, w);
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
