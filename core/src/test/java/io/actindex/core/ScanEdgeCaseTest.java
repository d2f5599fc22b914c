package io.actindex.core;

import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.assertEquals;

import java.util.SplittableRandom;
import java.util.function.IntPredicate;
import org.junit.jupiter.api.Test;

/**
 * The plain scan ({@link ScanSearcher}, and {@link ScanKernel} through both loops) on the edges:
 * widths around word boundaries (1 to 1,024 bits), layouts of 1-4 layers, every code identical, a
 * few distinct codes (ties at every distance), half the bits constant, one tight cluster; n of 0 to
 * 3 and a few hundred; k of -3, 0, 1, n-1, n, n+1 and Integer.MAX_VALUE; caps of -1, 0, 1 and
 * none; radius -1, 0 and the full width; masks empty, of one bit, of the whole layout, of a layer
 * (with and without the bits past the width set), random and of the bits past the width only;
 * queries with bits set past the width; filters empty, of one member, of all, sparse (walked),
 * half and a plain predicate. Against {@link PopcountReference} (an independent
 * {@code Long.bitCount} loop; Hamming 1950) and {@link BruteForce} (bit by bit). The query and the
 * mask must come back unchanged.
 */
class ScanEdgeCaseTest {

  @Test
  void scanEqualsReferenceOnTheEdges() {
    int rep = 0;
    for (int bits : AdversarialCodes.WIDTHS)
      for (String family : AdversarialCodes.FAMILIES) check(rep++, bits, family);
  }

  private static void check(int rep, int bits, String family) {
    long seed = Randoms.seed(rep);
    SplittableRandom rnd = new SplittableRandom(seed);
    CodeLayout layout = AdversarialCodes.layout(bits, rnd);
    int[] sizes = {0, 1, 2, 3, 1 + rnd.nextInt(300)};
    for (int n : sizes) {
      CodeBlock codes = AdversarialCodes.codes(family, layout, n, rnd);
      ScanSearcher scan = new ScanSearcher(codes);
      int w = codes.wordsPerCode();
      for (AdversarialCodes.Case c : AdversarialCodes.cases(codes, 3, rnd)) {
        long[] q = c.query(), mask = c.mask();
        IntPredicate accept = c.accept();
        String why = Randoms.describe(seed) + " bits=" + bits + " layout=" + layout + " family=" + family + " n=" + n + " " + c;
        for (int k : AdversarialCodes.ks(n, rnd))
          for (int maxDist : new int[] {-1, 0, 1, rnd.nextInt(bits + 1), Integer.MAX_VALUE}) {
            Hits expected = PopcountReference.knn(codes, q, k, accept, mask, maxDist);
            String what = why + " k=" + k + " maxDist=" + maxDist;
            assertEquals(expected, scan.knn(q, k, accept, mask, maxDist), what);
            if (k > 0 && maxDist == Integer.MAX_VALUE) {
              assertEquals(expected, scan.knn(q, k, accept, mask), what);
              assertEquals(BruteForce.knn(codes, q, k, accept, mask), expected, what + " (the two references)");
            }
            if (k > 0 && k < 5000 && maxDist >= 0 && n > 0)
              for (Loops loops : Loops.vectorUsable() ? Loops.values() : new Loops[] {Loops.SCALAR}) {
                TopK top = new TopK(k);
                long[] clean = ScanSearcher.checkQuery(layout, q, mask);
                ScanKernel.knn(loops, ScanKernel.Words.of(clean, ScanSearcher.checkMask(layout, mask), w), codes.words(), w, 0, n,
                    null, accept, top, maxDist);
                assertEquals(expected, top.toHits(), what + " loops=" + loops);
              }
          }
        for (int r : new int[] {-1, 0, 1, rnd.nextInt(bits + 1), bits, Integer.MAX_VALUE})
          assertEquals(PopcountReference.radius(codes, q, r, accept, mask), scan.radius(q, r, accept, mask), why + " radius=" + r);
        assertTrue(c.unchanged(), why + ": the query or the mask was changed");
      }
    }
  }
}
