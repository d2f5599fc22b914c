package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Hits;
import io.actindex.core.LayerMasks;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.util.List;
import java.util.SplittableRandom;
import java.util.function.IntPredicate;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;

/**
 * Masked k-NN through the index ({@link MihSearcher}: the partition with per-cover radii, the
 * tables, the scan, and the planner between them; the partition forced or chosen) against {@link BruteForce}: uniform, skewed
 * ReLU-like and dense ReLU codes of 64 to 1,024 bits and odd widths (100, 300, 700), cut into 1 to 5
 * layers at word boundaries or not; masks of one layer, several, every layer, whole words, any bits,
 * and layers plus stray bits; filters, distance caps, k from 1 to beyond n. Which path answered is
 * checked by the work counters, never the speed.
 */
class MaskedSearchTest {
  private static final int[] BITS = {64, 100, 128, 256, 300, 512, 700, 1024};

  @Test
  void maskedSearchEqualsBruteForce() {
    int byPartition = 0;
    for (int rep = 0; rep < 30; rep++) byPartition += check(rep, 500 + new SplittableRandom(Randoms.seed(rep)).nextInt(1500), 10);
    assertTrue(byPartition > 0, "the partition never answered a masked query");
  }

  @Test
  @Tag("slow")
  void maskedSearchEqualsBruteForceManySeeds() {
    int byPartition = 0;
    for (int rep = 200; rep < 260; rep++) byPartition += check(rep, 4096 + new SplittableRandom(Randoms.seed(rep)).nextInt(5000), 8);
    assertTrue(byPartition > 0, "the partition never answered a masked query");
  }

  /** Returns how many masked queries the partition answered. */
  private int check(int rep, int n, int queries) {
    long seed = Randoms.seed(rep);
    SplittableRandom rnd = new SplittableRandom(seed);
    int bits = BITS[rnd.nextInt(BITS.length)];
    CodeBlock codes = LayerMasks.cut(PartitionTest.codes(rep, n, bits, seed), rnd);
    SearchPlanOptions.Strategy strategy = rep % 2 == 0 ? SearchPlanOptions.Strategy.PARTITION : SearchPlanOptions.Strategy.AUTO;
    // consecutive-bit tables (plain) lie inside layers, so masked queries can use them too; the
    // entropy-balanced plan (slow to choose for wide codes) mixes the layers
    boolean plain = bits > 256 || rep % 4 < 2;
    SearchPlanOptions opts = SearchPlanOptions.defaults().withStrategy(strategy);
    MihSearcher s = (MihSearcher) Searchers.build(codes, plain ? opts.plain() : opts);
    String why = Randoms.describe(seed) + " family=" + rep % 3 + " n=" + n + " layout=" + codes.layout() + " strategy=" + strategy + " plain=" + plain;
    int byPartition = 0;
    for (int i = 0; i < queries; i++) {
      long[] q = MihExactnessTest.query(codes, rnd);
      long[] mask = LayerMasks.mask(codes.layout(), rnd);
      IntPredicate accept = PartitionTest.filter(rnd, n);
      int k = switch (rnd.nextInt(4)) {
        case 0 -> 1;
        case 1 -> 10;
        case 2 -> 100;
        default -> 1 + rnd.nextInt(n + 10);
      };
      int maxDist = rnd.nextInt(4) == 0 ? rnd.nextInt(bits / 3 + 1) : Integer.MAX_VALUE;
      String what = why + " query " + i + " " + LayerMasks.describe(mask) + " k=" + k + " maxDist=" + maxDist + " filter=" + accept;
      // the same mask twice: the second query finds the cover's radii already built
      Hits expected = BruteForce.knnWithin(codes, q, k, accept, mask, maxDist);
      for (int twice = 0; twice < 2; twice++) assertEquals(expected, s.knn(q, k, accept, mask, maxDist), what);
      if (s.lastQueryWork()[3] == MihSearcher.PATH_PARTITION) byPartition++;
      int r = rnd.nextInt(bits / 4 + 1);
      assertEquals(BruteForce.radius(codes, q, r, accept, mask), s.radius(q, r, accept, mask), what + " r=" + r);
    }
    return byPartition;
  }

  /**
   * Thousands of codes tied at masked distance 0 (one layer copied from a few codes): the k nearest
   * are the smallest ordinals among the ties, whichever path answers (the scan's head, which stops
   * once it holds k codes at distance 0, the partition or the tables), with filters and caps; and
   * the head answers the queries whose k nearest all tie at 0.
   */
  @Test
  void tiesAtZeroUnderAMaskEqualBruteForce() {
    int byHead = 0;
    for (int rep = 0; rep < 12; rep++) {
      long seed = Randoms.seed(300 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int bits = BITS[rnd.nextInt(BITS.length)] & ~1, n = 5000 + rnd.nextInt(5000);
      CodeBlock base = LayerMasks.cut(PartitionTest.codes(rep, n, bits, seed), rnd);
      long[] layer = LayerMasks.mask(base.layout(), rnd);
      CodeBlock codes = SyntheticCodes.tiedUnder(base, layer, 1 + rnd.nextInt(40), seed + 1);
      MihSearcher s = (MihSearcher) Searchers.build(codes, rep % 2 == 0 ? SearchPlanOptions.defaults() : SearchPlanOptions.defaults().plain());
      String why = Randoms.describe(seed) + " family=" + rep % 3 + " n=" + n + " layout=" + codes.layout() + " " + LayerMasks.describe(layer);
      for (int i = 0; i < 12; i++) {
        long[] q = codes.code(rnd.nextInt(n));
        for (int f = rnd.nextInt(3) == 0 ? rnd.nextInt(4) : 0; f > 0; f--) {
          int b = rnd.nextInt(bits);
          q[b >>> 6] ^= 1L << (b & 63);
        }
        long[] mask = rnd.nextInt(4) == 0 ? LayerMasks.mask(codes.layout(), rnd) : layer;
        IntPredicate accept = PartitionTest.filter(rnd, n);
        int k = new int[] {1, 10, 100, 1000, 1 + rnd.nextInt(n)}[rnd.nextInt(5)];
        int maxDist = rnd.nextInt(5) == 0 ? rnd.nextInt(3) : Integer.MAX_VALUE;
        String what = why + " query " + i + " mask " + LayerMasks.describe(mask) + " k=" + k + " maxDist=" + maxDist + " filter=" + accept;
        Hits expected = BruteForce.knnWithin(codes, q, k, accept, mask, maxDist);
        assertEquals(expected, s.knn(q, k, accept, mask, maxDist), what);
        if (s.lastQueryWork()[3] == MihSearcher.PATH_HEAD && expected.size() == k && expected.dist(k - 1) == 0) byHead++;
      }
    }
    assertTrue(byHead > 0, "no query was answered by the scan's head");
  }

  /**
   * The scan's head grows in steps: codes at masked distance 0 placed only at chosen ordinals (on
   * both sides of the step boundaries 1,024 / 2,048 / 4,096 / n/64 / n/32 / n/16 / n/8, and a few
   * at random), every other code at least 1 away, so the k nearest tie at 0 across a boundary, or
   * fewer than k codes lie at 0 and the rest of the answer comes from any path; k around the number
   * of zeros, filters that drop some of them, caps of 0 and 1. The head answers some queries and the
   * partition, started from the head's top (it skips the head's positions), others.
   */
  @Test
  void zerosAcrossTheHeadsStepsEqualBruteForce() {
    int byHead = 0, otherwise = 0, byPart = 0;
    for (int rep = 0; rep < 16; rep++) {
      long seed = Randoms.seed(400 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int bits = new int[] {64, 128, 256, 300}[rnd.nextInt(4)], n = 20_000 + rnd.nextInt(40_000);
      CodeBlock base = LayerMasks.cut(PartitionTest.codes(rep, n, bits, seed), rnd);
      long[] mask = LayerMasks.mask(base.layout(), rnd);
      long[] m0 = mask;
      if (java.util.stream.IntStream.range(0, bits).noneMatch(b -> (m0[b >>> 6] >>> (b & 63) & 1) != 0)) mask = base.layout().mask(0);
      long[] q = MihExactnessTest.query(base, rnd);
      int[] at = {1023, 1024, 1025, 2047, 2048, 4095, 4096, n / 64 - 1, n / 64, n / 32, n / 16 + 1, n / 8 - 1, n / 8,
          rnd.nextInt(n), rnd.nextInt(n), n - 1};
      int zeros = 1 + rnd.nextInt(at.length); // the first ones of a shuffled list are at distance 0
      int[] order = Randoms.permutation(at.length, rnd);
      boolean[] zero = new boolean[n];
      for (int i = 0; i < zeros; i++) zero[at[order[i]]] = true;
      CodeBlock codes = placeZeros(base, q, mask, zero, rnd);
      // fixed costs: which path answers must not depend on how busy the machine was when it measured its own
      MihSearcher s = (MihSearcher) Searchers.build(codes, rep % 2 == 0 ? SearchPlanOptions.defaults() : SearchPlanOptions.defaults().plain(),
          PlannerCosts.defaults());
      String why = Randoms.describe(seed) + " family=" + rep % 3 + " n=" + n + " layout=" + codes.layout() + " "
          + LayerMasks.describe(mask) + " zeros at " + java.util.Arrays.toString(java.util.stream.IntStream.range(0, n).filter(i -> zero[i]).toArray());
      for (int t = 0; t < 8; t++) {
        int k = Math.max(1, zeros + rnd.nextInt(5) - 2);
        if (t == 7) k = 10 * (1 + rnd.nextInt(10));
        int drop = at[order[rnd.nextInt(zeros)]];
        IntPredicate accept = switch (t % 4) {
          case 0 -> null;
          case 1 -> i -> i != drop; // one code at 0 filtered out
          case 2 -> PartitionTest.filter(rnd, n);
          default -> i -> i % 3 != 0;
        };
        int maxDist = t == 5 ? 0 : t == 6 ? 1 : Integer.MAX_VALUE;
        String what = why + " k=" + k + " maxDist=" + maxDist + " filter " + t % 4 + " drop=" + drop;
        assertEquals(BruteForce.knnWithin(codes, q, k, accept, mask, maxDist), s.knn(q, k, accept, mask, maxDist), what);
        if (s.lastQueryWork()[3] == MihSearcher.PATH_HEAD) byHead++;
        else otherwise++;
        if (s.lastQueryWork()[3] == MihSearcher.PATH_PARTITION) byPart++;
      }
    }
    assertTrue(byHead > 0 && byPart > 0 && otherwise > byPart, "paths: head " + byHead + ", partition " + byPart + ", others " + otherwise);
  }

  /**
   * The codes with their masked bits set to the query's where {@code zero}; elsewhere half of them
   * 1-2 masked bits from the query (thousands tied at 1), the others as they were, and every one at
   * least one masked bit off.
   */
  private static CodeBlock placeZeros(CodeBlock base, long[] q, long[] mask, boolean[] zero, SplittableRandom rnd) {
    int w = base.wordsPerCode(), bits = base.layout().bits();
    long[] words = base.words().clone();
    int[] maskBits = java.util.stream.IntStream.range(0, bits).filter(b -> (mask[b >>> 6] >>> (b & 63) & 1) != 0).toArray();
    for (int i = 0; i < zero.length; i++) {
      boolean near = zero[i] || rnd.nextBoolean();
      if (near) for (int j = 0; j < w; j++) words[i * w + j] = (words[i * w + j] & ~mask[j]) | (q[j] & mask[j]);
      if (zero[i]) continue;
      if (near)
        for (int f = 1 + rnd.nextInt(2); f > 0; f--) {
          int b = maskBits[rnd.nextInt(maskBits.length)];
          words[i * w + (b >>> 6)] ^= 1L << (b & 63);
        }
      long diff = 0;
      for (int j = 0; j < w; j++) diff |= (words[i * w + j] ^ q[j]) & mask[j];
      if (diff == 0) { // equal on the mask after all: one bit off
        int b = maskBits[rnd.nextInt(maskBits.length)];
        words[i * w + (b >>> 6)] ^= 1L << (b & 63);
      }
    }
    return new CodeBlock(base.layout(), base.size(), words);
  }

  /**
   * Dense ReLU codes of two 128-bit layers: 10-NN over either layer is answered by the partition
   * for most in-distribution queries (the planner found it cheaper than the masked scan).
   */
  @Test
  void plannerAnswersLayerMasksByThePartitionOnDenseCodes() {
    // one fixed network: which path answers is a property of the data (some random networks' second
    // layer sends most queries elsewhere, e.g. 8 of 20 by the partition); exactness over many seeds
    // is checked by the tests above
    long seed = 17;
    SyntheticCodes.ReluNet net = SyntheticCodes.ReluNet.dense(32, 128, 128, 20, seed);
    CodeBlock codes = net.sample(100_000, 0, seed + 1).codes(); // about 50 clusters of 2,048 (30k gave 15, too coarse to pay)
    CodeBlock queries = net.sample(20, 0, seed + 2).codes();
    // fixed costs: with this machine's, measured once per JVM under whatever load, the choice moved
    // (the partition answered 4 of 20 once)
    MihSearcher s = (MihSearcher) Searchers.build(codes, SearchPlanOptions.defaults(), PlannerCosts.defaults());
    for (int layer = 0; layer < 2; layer++) {
      long[] mask = codes.layout().mask(layer);
      int byPartition = 0;
      for (int i = 0; i < queries.size(); i++) {
        long[] q = queries.code(i);
        assertEquals(BruteForce.knn(codes, q, 10, null, mask), s.knn(q, 10, null, mask), Randoms.describe(seed) + " layer " + layer);
        if (s.lastQueryWork()[3] == MihSearcher.PATH_PARTITION) byPartition++;
      }
      assertTrue(byPartition >= queries.size() / 2, Randoms.describe(seed) + " layer " + layer + ": partition answered " + byPartition + " of 20");
    }
  }

  /**
   * Dense codes out of distribution at k = 100 under one layer: the planner leaves the partition
   * untried for some queries after the masked scan's head (its estimate under the head's guess of
   * the k-th distance is hopeless) and answers them by the scan, exactly. (At k = 10 the head is too
   * small a sample for the guess; the partition may then be left untried only because it cannot
   * pay even at distance 0, next test.)
   */
  @Test
  void aHopelessPartitionIsLeftUntriedAndTheAnswerStaysExact() {
    long seed = 23;
    SyntheticCodes.ReluNet net = SyntheticCodes.ReluNet.dense(32, 32, 32, 20, seed);
    CodeBlock codes = net.sample(20_000, 0, seed + 1).codes();
    CodeBlock ood = net.sample(40, 4.0, seed + 2).codes();
    MihSearcher s = (MihSearcher) Searchers.build(codes, SearchPlanOptions.defaults(), PlannerCosts.defaults());
    for (int layer = 0; layer < 2; layer++) {
      long[] mask = codes.layout().mask(layer);
      int untried = 0;
      for (int i = 0; i < ood.size(); i++) {
        long[] q = ood.code(i);
        assertEquals(BruteForce.knn(codes, q, 100, null, mask), s.knn(q, 100, null, mask), Randoms.describe(seed) + " layer " + layer + " query " + i);
        if (s.lastLeftPartitionUntried()) untried++;
        assertEquals(BruteForce.knn(codes, q, 10, null, mask), s.knn(q, 10, null, mask), Randoms.describe(seed) + " layer " + layer + " query " + i);
      }
      assertTrue(untried > 0, Randoms.describe(seed) + " layer " + layer + ": the partition was tried for every query");
    }
  }

  /**
   * Uniform random codes under one layer: every code is about as far from every centre, so even if
   * the partition's try found k codes at distance 0, its windows (codes whose radius reaches the
   * query's distance to their centre) would hold nearly every code. The planner leaves it untried at
   * any k, including k = 1 where the head is too small a sample to guess the k-th distance, and the
   * scan answers, exactly.
   */
  @Test
  void aPartitionThatCannotPayEvenAtDistanceZeroIsLeftUntried() {
    for (int rep = 0; rep < 6; rep++) {
      long seed = Randoms.seed(800 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeLayout layout = new CodeLayout(List.of(new CodeLayout.Segment("a", 64), new CodeLayout.Segment("b", 64)));
      int n = 20_000 + rnd.nextInt(40_000);
      long[] words = new long[2 * n];
      for (int i = 0; i < words.length; i++) words[i] = rnd.nextLong();
      CodeBlock codes = new CodeBlock(layout, n, words);
      MihSearcher s = (MihSearcher) Searchers.build(codes, SearchPlanOptions.defaults(), PlannerCosts.defaults());
      long[] mask = layout.mask(rep % 2);
      for (int i = 0; i < 10; i++) {
        long[] q = {rnd.nextLong(), rnd.nextLong()};
        for (int k : new int[] {1, 10}) {
          String why = Randoms.describe(seed) + " n=" + n + " query " + i + " k=" + k;
          assertEquals(BruteForce.knn(codes, q, k, null, mask), s.knn(q, k, null, mask), why);
          assertTrue(s.lastLeftPartitionUntried(), why + ": the partition was tried");
        }
      }
    }
  }

  /**
   * The head's first step holds codes at masked distance 1 only (the query's layer with one bit
   * flipped, or farther); the next position holds the query's layer exactly. Only codes at distance 0
   * can still enter, so before trying the partition the head reads as many codes as the try would:
   * the code at 0 ends the query there, answered by the head (before, the partition was tried first
   * and the scan finished). A code at 0 only far past the head is found exactly by whichever path.
   */
  @Test
  void aCodeAtDistanceZeroJustPastTheHeadIsFoundBeforeThePartitionIsTried() {
    for (int rep = 0; rep < 8; rep++) {
      long seed = Randoms.seed(700 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeLayout layout = new CodeLayout(List.of(new CodeLayout.Segment("a", 64), new CodeLayout.Segment("b", 64)));
      int n = 30_000 + rnd.nextInt(70_000), headEnd = Math.max(MihSearcher.HEAD_MIN, n / MihSearcher.HEAD_SHARE);
      int zeroAt = rep % 2 == 0 ? headEnd : n / 2 + rnd.nextInt(n / 2);
      long zb = rnd.nextLong();
      long[] words = new long[2 * n];
      for (int i = 0; i < n; i++) {
        words[2 * i] = rnd.nextLong();
        words[2 * i + 1] = i == zeroAt ? zb : i < headEnd || rnd.nextInt(4) == 0 ? zb ^ 1L << rnd.nextInt(64) : rnd.nextLong();
      }
      CodeBlock codes = new CodeBlock(layout, n, words);
      MihSearcher s = (MihSearcher) Searchers.build(codes, SearchPlanOptions.defaults(), PlannerCosts.defaults());
      long[] mask = layout.mask(1), q = {rnd.nextLong(), zb};
      String why = Randoms.describe(seed) + " n=" + n + " zero at " + zeroAt;
      Hits got = s.knn(q, 1, null, mask);
      assertEquals(BruteForce.knn(codes, q, 1, null, mask), got, why);
      assertEquals(zeroAt, got.ord(0), why);
      if (zeroAt == headEnd) assertEquals(MihSearcher.PATH_HEAD, s.lastQueryWork()[3], why + ": the partition was tried first");
    }
  }

  /**
   * After the masked scan's head, the partition's first cluster holds k codes at distance 0 while
   * thousands more at distance 0 lie in another cluster: the partition would have to read them all
   * (an estimate well under a third of the whole scan, which once chose it), while the scan stops by
   * the largest position among those k, a few hundred positions on. The scan answers, exactly.
   * (k = 30: the head, n / 64 codes, is then too small a sample to leave the partition untried.)
   */
  @Test
  void codesAtDistanceZeroJustPastTheHeadAreLeftToTheScan() {
    for (int rep = 0; rep < 5; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeLayout layout = new CodeLayout(List.of(new CodeLayout.Segment("a", 64), new CodeLayout.Segment("b", 64)));
      int n = 80_000, k = 30, firstZero = n / 8 + 20;
      long za = rnd.nextLong(), zb = rnd.nextLong();
      long[] words = new long[2 * n];
      for (int i = 0; i < n; i++) {
        // before: at distance 1; after: every 10th at distance 0, in two groups far apart in the
        // first layer (two clusters), the rest at distance 63
        boolean zero = i >= firstZero && i % 10 == 0;
        words[2 * i] = !zero ? rnd.nextLong() : i % 20 == 0 ? za : ~za;
        words[2 * i + 1] = i < firstZero ? zb ^ 1L : zero ? zb : ~zb ^ 1L << rnd.nextInt(64);
      }
      CodeBlock codes = new CodeBlock(layout, n, words);
      MihSearcher s = (MihSearcher) Searchers.build(codes, SearchPlanOptions.defaults(), PlannerCosts.defaults());
      long[] mask = layout.mask(1);
      long[] q = {rnd.nextLong(), zb};
      assertEquals(BruteForce.knn(codes, q, k, null, mask), s.knn(q, k, null, mask), Randoms.describe(seed));
      assertEquals(MihSearcher.PATH_SCAN, s.lastQueryWork()[3], Randoms.describe(seed) + ": not answered by the scan");
    }
  }
}
