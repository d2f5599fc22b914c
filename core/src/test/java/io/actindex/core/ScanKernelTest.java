package io.actindex.core;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertSame;

import java.util.SplittableRandom;
import java.util.function.IntPredicate;
import org.junit.jupiter.api.Test;

/**
 * The scan's loops (1, 2, 4, 8 words and the general one, masked or not), filters given as an
 * {@link IdSet} (walked when selective, tested after the distance otherwise) or as any predicate,
 * and the distance cap, each against the bit-by-bit {@link BruteForce}, on uniform and ReLU-like
 * codes of 64 to 1,088 bits.
 */
class ScanKernelTest {
  private static final int[] WORDS = {1, 2, 3, 4, 5, 8, 16, 17};

  @Test
  void everyWidthMaskFilterAndCapEqualsBruteForce() {
    for (int rep = 0; rep < 160; rep++) {
      long seed = Randoms.seed(rep);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      int words = WORDS[rep % WORDS.length];
      int bits = 64 * (words - 1) + 1 + rnd.nextInt(64);
      int n = 1 + rnd.nextInt(rep % 5 == 0 ? 6000 : 700); // large enough for walks of several blocks of members
      CodeBlock codes = rep % 3 == 0 && bits >= 4
          ? SyntheticCodes.reluLike(n, bits / 2, bits - bits / 2, seed).codes()
          : SyntheticCodes.uniform(n, bits, seed);
      ScanSearcher scan = new ScanSearcher(codes);
      long[] q = codes.code(rnd.nextInt(n));
      for (int f = rnd.nextInt(8); f > 0; f--) {
        int b = rnd.nextInt(bits);
        q[b >>> 6] ^= 1L << (b & 63);
      }
      long[] mask = null;
      if (rnd.nextBoolean()) {
        mask = new long[codes.wordsPerCode()];
        for (int i = 0; i < mask.length; i++) mask[i] = rnd.nextLong();
      }
      IntPredicate accept = filter(rnd, n);
      int k = 1 + rnd.nextInt(rnd.nextBoolean() ? 12 : n + 5);
      int maxDist = rnd.nextInt(3) == 0 ? rnd.nextInt(bits + 1) : Integer.MAX_VALUE;
      String what = why + " bits=" + bits + " n=" + n + " k=" + k + " accept=" + accept + " maxDist=" + maxDist;
      assertEquals(BruteForce.knnWithin(codes, q, k, accept, mask, maxDist), scan.knn(q, k, accept, mask, maxDist), what);
      int r = rnd.nextInt(bits / 3 + 2);
      assertEquals(BruteForce.radius(codes, q, r, accept, mask), scan.radius(q, r, accept, mask), what + " r=" + r);
    }
  }

  /**
   * Layer masks select whole words, words cut by a layer boundary and skipped words: every
   * selection loop (1, 2, 3, 4, 8 whole words, the general one) against the brute force, at 64 to
   * 1,024 bits and odd widths, on uniform and ReLU-like codes cut into 1 to 5 layers.
   */
  @Test
  void layerMasksEqualBruteForce() {
    int[] widths = {64, 100, 128, 192, 256, 300, 512, 700, 1024};
    for (int rep = 0; rep < 240; rep++) {
      long seed = Randoms.seed(1000 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int bits = widths[rep % widths.length], n = 1 + rnd.nextInt(400);
      CodeBlock codes = LayerMasks.cut(rep % 2 == 0 ? SyntheticCodes.uniform(n, bits, seed)
          : SyntheticCodes.reluLike(n, bits / 2, bits - bits / 2, seed).codes(), rnd);
      ScanSearcher scan = new ScanSearcher(codes);
      long[] mask = LayerMasks.mask(codes.layout(), rnd);
      long[] q = codes.code(rnd.nextInt(n));
      for (int f = rnd.nextInt(10); f > 0; f--) {
        int b = rnd.nextInt(bits);
        q[b >>> 6] ^= 1L << (b & 63);
      }
      IntPredicate accept = filter(rnd, n);
      int k = 1 + rnd.nextInt(rnd.nextBoolean() ? 12 : n + 5);
      String what = Randoms.describe(seed) + " layout=" + codes.layout() + " " + LayerMasks.describe(mask) + " k=" + k + " accept=" + accept;
      assertEquals(BruteForce.knn(codes, q, k, accept, mask), scan.knn(q, k, accept, mask), what);
      int r = rnd.nextInt(bits / 4 + 2);
      assertEquals(BruteForce.radius(codes, q, r, accept, mask), scan.radius(q, r, accept, mask), what + " r=" + r);
    }
  }

  /**
   * Many codes tied at distance 0 under a layer mask (the layer copied from a few codes) and exact
   * copies: the scan keeps the k smallest ordinals among the ties and stops once it holds k codes at
   * distance 0; against the brute force with filters and caps.
   */
  @Test
  void tiesAtZeroEqualBruteForce() {
    int[] widths = {64, 100, 128, 192, 256, 300, 512, 1024};
    for (int rep = 0; rep < 120; rep++) {
      long seed = Randoms.seed(2000 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int bits = widths[rep % widths.length], n = 1 + rnd.nextInt(3000);
      Tied tied = tied(rep, n, bits, seed, rnd);
      CodeBlock codes = tied.codes();
      long[] layer = tied.layer();
      long[] q = codes.code(rnd.nextInt(n));
      IntPredicate accept = filter(rnd, n);
      int k = 1 + rnd.nextInt(rnd.nextBoolean() ? 120 : n + 5);
      int maxDist = rnd.nextInt(4) == 0 ? rnd.nextInt(3) : Integer.MAX_VALUE;
      String what = Randoms.describe(seed) + " layout=" + codes.layout() + " " + (layer == null ? "no mask" : LayerMasks.describe(layer))
          + " n=" + n + " k=" + k + " accept=" + accept + " maxDist=" + maxDist;
      assertEquals(BruteForce.knnWithin(codes, q, k, accept, layer, maxDist), new ScanSearcher(codes).knn(q, k, accept, layer, maxDist), what);
    }
  }

  /**
   * One scan cut into runs at random positions, one top carried from run to run without ordinals
   * (as the planner's head of a masked scan grows in steps and the scan then goes on from it): the
   * top of every prefix and the whole equal the brute force, with thousands of codes tied at 0 and
   * at the k-th distance across the cuts, through the scalar and the vector loops.
   */
  @Test
  void runsContinuedWithOneTopEqualBruteForce() {
    for (int rep = 0; rep < 60; rep++) {
      long seed = Randoms.seed(500 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int bits = new int[] {64, 100, 128, 256, 300, 512, 1024}[rnd.nextInt(7)], n = 500 + rnd.nextInt(4000);
      Tied tied = tied(rep, n, bits, seed, rnd);
      CodeBlock codes = tied.codes();
      long[] layer = tied.layer();
      long[] q = ScanSearcher.checkQuery(codes.layout(), codes.code(rnd.nextInt(n)), layer);
      long[] mask = ScanSearcher.checkMask(codes.layout(), layer);
      IntPredicate accept = filter(rnd, n);
      int k = 1 + rnd.nextInt(rnd.nextBoolean() ? 120 : n + 5);
      int maxDist = rnd.nextInt(4) == 0 ? rnd.nextInt(3) : Integer.MAX_VALUE;
      Loops loops = Loops.vectorUsable() && rnd.nextBoolean() ? Loops.VECTOR : Loops.SCALAR;
      ScanKernel.Words sel = ScanKernel.Words.of(q, mask, codes.wordsPerCode());
      TopK top = new TopK(Math.min(k, n));
      String what = Randoms.describe(seed) + " layout=" + codes.layout() + " " + (layer == null ? "no mask" : LayerMasks.describe(layer))
          + " n=" + n + " k=" + k + " accept=" + accept + " maxDist=" + maxDist + " loops=" + loops;
      for (int from = 0; from < n; ) {
        int to = Math.min(n, from + 1 + rnd.nextInt(rnd.nextBoolean() ? 64 : n / 3 + 1));
        ScanKernel.knn(loops, sel, codes.words(), codes.wordsPerCode(), from, to, null, accept, top, maxDist);
        CodeBlock prefix = codes.slice(0, to);
        assertEquals(BruteForce.knnWithin(prefix, q, k, accept, layer, maxDist), top.toHits(), what + " after [0," + to + ")");
        from = to;
      }
    }
  }

  /** Codes of which thousands tie over {@code layer} (null: over every bit). */
  private record Tied(CodeBlock codes, long[] layer) {}

  /**
   * {@link ScanKernel#least8} and {@link ScanKernel#distances8} through each loop this JVM has: each
   * of eight queries' least distance to a run of codes (starting best values kept where smaller,
   * runs empty or odd-sized), and every distance, against a plain loop over the pairs, at every
   * width of {@code WORDS}.
   */
  @Test
  void eightQueriesAtOnceEqualThePairs() {
    for (int rep = 0; rep < 80; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int words = WORDS[rep % WORDS.length], bits = 64 * (words - 1) + 1 + rnd.nextInt(64), n = 1 + rnd.nextInt(300);
      CodeBlock codes = rep % 2 == 0 ? SyntheticCodes.uniform(n, bits, seed) : SyntheticCodes.reluLike(n, bits / 2, bits - bits / 2, seed).codes();
      int w = codes.wordsPerCode(), from = rnd.nextInt(n + 1), to = from + rnd.nextInt(n - from + 1);
      long[] q = new long[8 * w], start = new long[8], expected = new long[8], all = new long[8 * (to - from)];
      for (int i = 0; i < 8; i++) {
        long[] code = codes.code(rnd.nextInt(n));
        if (rnd.nextBoolean()) code[0] ^= 1L << rnd.nextInt(64);
        for (int j = 0; j < w; j++) q[8 * j + i] = code[j];
        start[i] = expected[i] = rnd.nextBoolean() ? Long.MAX_VALUE : rnd.nextInt(bits + 1);
        for (int y = from; y < to; y++) {
          long d = 0;
          for (int j = 0; j < w; j++) d += Long.bitCount(codes.words()[y * w + j] ^ code[j]);
          expected[i] = Math.min(expected[i], d);
          all[8 * (y - from) + i] = d;
        }
      }
      for (Loops loops : Loops.vectorUsable() ? Loops.values() : new Loops[] {Loops.SCALAR}) {
        long[] best = start.clone();
        ScanKernel.least8(loops, q, codes.words(), w, from, to, best);
        String why = Randoms.describe(seed) + " " + loops + " bits " + bits + " codes " + from + ".." + to;
        org.junit.jupiter.api.Assertions.assertArrayEquals(expected, best, why);
        long[] got = new long[all.length];
        ScanKernel.distances8(loops, q, codes.words(), w, from, to, got);
        org.junit.jupiter.api.Assertions.assertArrayEquals(all, got, why);
      }
    }
  }

  /** Uniform or ReLU-like codes cut into layers, a layer mask (null for every fifth rep), and one layer copied from a few codes. */
  private static Tied tied(int rep, int n, int bits, long seed, SplittableRandom rnd) {
    CodeBlock base = LayerMasks.cut(rep % 2 == 0 ? SyntheticCodes.uniform(n, bits, seed)
        : SyntheticCodes.reluLike(n, bits / 2, bits - bits / 2, seed).codes(), rnd);
    long[] layer = rep % 5 == 0 ? null : LayerMasks.mask(base.layout(), rnd);
    long[] all = new long[base.wordsPerCode()];
    java.util.Arrays.fill(all, -1L);
    return new Tied(SyntheticCodes.tiedUnder(base, layer == null ? all : layer, 1 + rnd.nextInt(30), seed + 1), layer);
  }

  /** An empty filter answers at once; the planner-facing count matches the members. */
  @Test
  void emptyFilterAnswersNothing() {
    CodeBlock codes = SyntheticCodes.uniform(100, 256, 1);
    IdSet none = IdSet.of(100);
    assertSame(Hits.EMPTY, new ScanSearcher(codes).knn(codes.code(0), 5, none, null));
    assertSame(Hits.EMPTY, new ScanSearcher(codes).radius(codes.code(0), 256, none, null));
  }

  /** Filters of every density: none, one code, about 1%, 10% (walked), 60% (scanned), a lambda. */
  static IntPredicate filter(SplittableRandom rnd, int n) {
    int kind = rnd.nextInt(6);
    if (kind == 0) return null;
    if (kind == 5) return i -> i % 3 != 0;
    double share = switch (kind) {
      case 1 -> 0;
      case 2 -> 0.01;
      case 3 -> 0.1;
      default -> 0.6;
    };
    long[] w = new long[(n + 63) >>> 6];
    for (int i = 0; i < n; i++) if (rnd.nextDouble() < share) w[i >>> 6] |= 1L << (i & 63);
    if (kind == 1) w[0] = 0;
    if (kind == 1 && rnd.nextBoolean()) w[0] = 1; // a single member
    return IdSet.of(w, n);
  }
}
