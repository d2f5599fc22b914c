package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hits;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.util.SplittableRandom;
import java.util.function.IntPredicate;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

/** Every search path of {@link Searchers} against {@link BruteForce}, on uniform and ReLU-like codes. */
class MihExactnessTest {

  /**
   * A plan variant per repetition: 0 the defaults (planner on), 1 tables forced, 2 tables forced
   * with a given number m of substrings (odd m included), 3 the plain layout (no constant-bit
   * dropping, consecutive bits per substring) with at most 1-4 tables forced, which on long codes
   * indexes only some bits (the lower-bound cascade), 4 the planner with at most 2-7 tables.
   */
  static SearchPlanOptions options(int rep, SplittableRandom rnd) {
    SearchPlanOptions d = SearchPlanOptions.defaults();
    return switch (rep % 5) {
      case 0 -> d;
      case 1 -> d.withStrategy(SearchPlanOptions.Strategy.TABLES);
      case 2 -> d.withStrategy(SearchPlanOptions.Strategy.TABLES).withSubstrings(1 + rnd.nextInt(12));
      case 3 -> d.plain().withStrategy(SearchPlanOptions.Strategy.TABLES).withMaxSubstrings(1 + rnd.nextInt(4));
      default -> d.withMaxSubstrings(2 + rnd.nextInt(6));
    };
  }

  /** A query near a random indexed code (a few bits flipped), or a fresh random one. */
  static long[] query(CodeBlock codes, SplittableRandom rnd) {
    int bits = codes.layout().bits();
    long[] q;
    if (codes.size() > 0 && rnd.nextInt(4) != 0) {
      q = codes.code(rnd.nextInt(codes.size()));
      int flips = rnd.nextInt(1 + Math.min(bits, 12));
      for (int f = 0; f < flips; f++) {
        int b = rnd.nextInt(bits);
        q[b >>> 6] ^= 1L << (b & 63);
      }
    } else {
      q = new long[codes.wordsPerCode()];
      for (int b = 0; b < bits; b++) if (rnd.nextBoolean()) q[b >>> 6] |= 1L << (b & 63);
    }
    return q;
  }

  static IntPredicate filter(SplittableRandom rnd) {
    return switch (rnd.nextInt(4)) {
      case 0 -> i -> i % 3 != 0;
      case 1 -> {
        long salt = rnd.nextLong();
        yield i -> (new SplittableRandom(salt + i).nextInt(10)) == 0; // keeps about 10%
      }
      default -> null;
    };
  }

  static long[] mask(CodeBlock codes, SplittableRandom rnd) {
    int segs = codes.layout().segments().size();
    return switch (rnd.nextInt(4)) {
      case 0 -> codes.layout().mask(rnd.nextInt(segs)); // one segment (the only one for single-segment layouts)
      case 1 -> {
        long[] m = new long[codes.wordsPerCode()];
        for (int b = 0; b < codes.layout().bits(); b++) if (rnd.nextInt(3) != 0) m[b >>> 6] |= 1L << (b & 63);
        yield m;
      }
      default -> null;
    };
  }

  /** Checks knn (k = 1, 10, 100, n+3) and radius (0 .. beyond the largest distance) for a few queries. */
  static void checkAll(CodeBlock codes, CodeSearcher s, SplittableRandom rnd, long seed, int queries) {
    int bits = codes.layout().bits();
    for (int qi = 0; qi < queries; qi++) {
      long[] q = query(codes, rnd);
      IntPredicate accept = filter(rnd);
      long[] mask = mask(codes, rnd);
      String why = Randoms.describe(seed) + " query " + qi + " filter " + (accept != null) + " mask " + (mask != null)
          + " plan " + Searchers.stats(s);
      for (int k : new int[] {1, 10, 100, codes.size() + 3})
        assertEquals(BruteForce.knn(codes, q, k, accept, mask), s.knn(q, k, accept, mask), why + " k=" + k);
      Hits all = BruteForce.knn(codes, q, codes.size(), accept, mask);
      int maxDist = all.size() == 0 ? 0 : all.dist(all.size() - 1);
      int[] radii = {0, 1, 2, 4, rnd.nextInt(bits + 1), all.size() == 0 ? 3 : all.dist(0), maxDist, maxDist + 1, bits + 1};
      for (int r : radii)
        assertEquals(BruteForce.radius(codes, q, r, accept, mask), s.radius(q, r, accept, mask), why + " r=" + r);
    }
  }

  @ParameterizedTest
  @ValueSource(ints = {64, 128, 256, 1024, 2048})
  void uniformCodes(int bits) {
    int reps = bits >= 1024 ? 5 : 10;
    for (int rep = 0; rep < reps; rep++) {
      long seed = Randoms.seed(bits * 100 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = 1 + rnd.nextInt(bits >= 1024 ? 400 : 1200);
      // independent, uniformly random bits (constant, rare and copied bits: oddWidthsAndSkewedBits)
      CodeBlock codes = SyntheticCodes.uniform(n, bits, seed);
      CodeSearcher s = Searchers.build(codes, options(rep, rnd));
      checkAll(codes, s, rnd, seed, 3);
    }
  }

  @Test
  void oddWidthsAndSkewedBits() {
    for (int rep = 0; rep < 30; rep++) {
      long seed = Randoms.seed(7000 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int bits = 1 + rnd.nextInt(200), n = rnd.nextInt(500);
      CodeBlock codes = skewed(n, bits, rnd);
      checkAll(codes, Searchers.build(codes, options(rep, rnd)), rnd, seed, 3);
    }
  }

  @Test
  void reluLikeCodes() {
    for (int rep = 0; rep < 15; rep++) {
      long seed = Randoms.seed(9000 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeBlock codes = SyntheticCodes.reluLike(300 + rnd.nextInt(1500), 32 + rnd.nextInt(100), 16 + rnd.nextInt(80), seed).codes();
      checkAll(codes, Searchers.build(codes, options(rep, rnd)), rnd, seed, 4);
    }
  }

  @Test
  void outOfDistributionQueriesOnReluCodes() {
    for (int rep = 0; rep < 6; rep++) {
      long seed = Randoms.seed(9500 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      SyntheticCodes.ReluNet net = new SyntheticCodes.ReluNet(16, 96, 64, 6, seed);
      CodeBlock codes = net.sample(3000, 0, seed + 1).codes();
      CodeBlock far = net.sample(10, 5, seed + 2).codes();
      CodeSearcher s = Searchers.build(codes, options(rep, rnd));
      for (int i = 0; i < far.size(); i++) {
        long[] q = far.code(i);
        assertEquals(BruteForce.knn(codes, q, 10, null, null), s.knn(q, 10), Randoms.describe(seed) + " query " + i);
        assertEquals(BruteForce.radius(codes, q, 20, null, null), s.radius(q, 20), Randoms.describe(seed) + " query " + i);
      }
    }
  }

  @Test
  void emptyBlockAndTinyBlocks() {
    for (int n = 0; n <= 3; n++) {
      long seed = Randoms.seed(n);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeBlock codes = SyntheticCodes.uniform(n, 70, seed);
      for (int rep = 0; rep < 5; rep++) checkAll(codes, Searchers.build(codes, options(rep, rnd)), rnd, seed, 2);
    }
  }

  @Test
  void allCodesEqual() {
    long seed = Randoms.seed(77);
    SplittableRandom rnd = new SplittableRandom(seed);
    CodeBlock one = SyntheticCodes.uniform(1, 100, seed);
    CodeBlock codes = one;
    for (int i = 0; i < 50; i++) codes = codes.concat(one);
    // every bit is constant: no tables at all, the constant distance alone decides
    CodeSearcher s = Searchers.build(codes);
    assertEquals(0, Searchers.stats(s).substrings());
    checkAll(codes, s, rnd, seed, 5);
  }

  @Tag("slow")
  @Test
  void manySeedsMediumBlocks() {
    for (int rep = 0; rep < 40; rep++) {
      long seed = Randoms.seed(20_000 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeBlock codes = rep % 2 == 0
          ? SyntheticCodes.reluLike(5000 + rnd.nextInt(5000), 64 + rnd.nextInt(128), 64 + rnd.nextInt(128), seed).codes()
          : skewed(5000 + rnd.nextInt(5000), 32 + rnd.nextInt(300), rnd);
      checkAll(codes, Searchers.build(codes, options(rep, rnd)), rnd, seed, 3);
    }
  }

  /** Codes with constant bits, rarely-set bits and copied bits. */
  static CodeBlock skewed(int n, int bits, SplittableRandom rnd) {
    boolean[][] rows = new boolean[n][bits];
    double[] p = new double[bits];
    int[] copyOf = new int[bits];
    for (int b = 0; b < bits; b++) {
      int kind = rnd.nextInt(6);
      p[b] = kind == 0 ? 0 : kind == 1 ? 1 : kind == 2 ? 0.03 : rnd.nextDouble();
      copyOf[b] = kind == 3 && b > 0 ? rnd.nextInt(b) : -1;
    }
    for (int i = 0; i < n; i++)
      for (int b = 0; b < bits; b++)
        rows[i][b] = copyOf[b] >= 0 ? rows[i][copyOf[b]] ^ (rnd.nextInt(20) == 0) : rnd.nextDouble() < p[b];
    return CodeBlock.fromBits(io.actindex.core.CodeLayout.single("bits", bits), rows);
  }
}
