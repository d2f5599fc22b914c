package io.actindex.core;

import static org.junit.jupiter.api.Assertions.assertEquals;

import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

class ScanSearcherTest {

  @Test
  void scanEqualsBruteForceOnUniformAndReluCodes() {
    for (int rep = 0; rep < 20; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeBlock codes = rep % 2 == 0
          ? SyntheticCodes.uniform(300, 1 + rnd.nextInt(300), seed)
          : SyntheticCodes.reluLike(300, 40 + rnd.nextInt(100), 20 + rnd.nextInt(60), seed).codes();
      ScanSearcher scan = new ScanSearcher(codes);
      long[] q = codes.code(rnd.nextInt(codes.size()));
      q[0] ^= 5;
      int k = 1 + rnd.nextInt(50);
      assertEquals(BruteForce.knn(codes, q, k, null, null), scan.knn(q, k), Randoms.describe(seed));
      int r = rnd.nextInt(codes.layout().bits() + 2);
      assertEquals(BruteForce.radius(codes, q, r, i -> i % 3 != 0, null),
          scan.radius(q, r, i -> i % 3 != 0, null), Randoms.describe(seed));
    }
  }

  /** The four-word path (193..256 bits, no filter, no mask) against the bit-by-bit reference. */
  @Test
  void fourWordPathEqualsBruteForce() {
    for (int rep = 0; rep < 40; rep++) {
      long seed = Randoms.seed(1000 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeBlock codes = rep % 2 == 0
          ? SyntheticCodes.uniform(400, 193 + rnd.nextInt(64), seed)
          : SyntheticCodes.reluLike(400, 128, 128, seed).codes();
      ScanSearcher scan = new ScanSearcher(codes);
      long[] q = codes.code(rnd.nextInt(codes.size()));
      q[rnd.nextInt(3)] ^= rnd.nextLong();
      int k = 1 + rnd.nextInt(120);
      assertEquals(BruteForce.knn(codes, q, k, null, null), scan.knn(q, k), Randoms.describe(seed));
      int maxDist = rnd.nextInt(codes.layout().bits());
      Hits all = BruteForce.knn(codes, q, k, null, null);
      int within = 0;
      while (within < all.size() && all.dist(within) <= maxDist) within++;
      Hits expected = new Hits(java.util.Arrays.copyOf(all.ords(), within), java.util.Arrays.copyOf(all.dists(), within));
      assertEquals(expected, scan.knn(q, k, null, null, maxDist), Randoms.describe(seed));
    }
  }
}
