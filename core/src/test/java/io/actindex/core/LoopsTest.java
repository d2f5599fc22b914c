package io.actindex.core;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assumptions.assumeTrue;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import java.util.function.IntPredicate;
import org.junit.jupiter.api.Test;

/**
 * Both loops of {@link ScanKernel} ({@link Loops#SCALAR} and {@link Loops#VECTOR}, called
 * directly whatever this JVM chose) against the bit-by-bit {@link BruteForce}: 1 to 17 words and
 * widths that cut a word (100, 300 bits), run lengths below, at and past multiples of eight codes,
 * uniform, ReLU-like (skewed, many ties) and few-distinct codes (every code tied with many),
 * random masks and layer masks, filters, distance caps, and windows scanned one after another into
 * one top-k with ordinals out of order (as the partition does); and the radius loop {@link
 * ScanKernel#within} of the self-join. The vector rows need the JVM of
 * the tests to have {@code --add-modules jdk.incubator.vector} and 512-bit vectors (surefire's
 * {@code argLine} passes the module); the choice itself is checked in child JVMs.
 */
class LoopsTest {
  private static final int[] BITS = {64, 100, 128, 150, 192, 256, 300, 320, 400, 448, 512, 576, 700, 960, 1024, 1088};

  @Test
  void scalarEqualsBruteForce() {
    check(Loops.SCALAR);
  }

  @Test
  void vectorEqualsBruteForce() {
    assumeTrue(Loops.vectorUsable(), "no jdk.incubator.vector module or no 512-bit vectors in this JVM");
    check(Loops.VECTOR);
  }

  private static void check(Loops loops) {
    for (int rep = 0; rep < 320; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int bits = rep % 3 == 0 ? 1 + rnd.nextInt(17 * 64) : BITS[rep % BITS.length];
      int n = rnd.nextBoolean() ? rnd.nextInt(40) : rnd.nextInt(1500);
      CodeBlock codes = LayerMasks.cut(codes(rnd, n, bits, seed), rnd);
      int w = codes.wordsPerCode();
      long[] q = query(rnd, codes);
      long[] mask = mask(rnd, codes.layout());
      IntPredicate accept = ScanKernelTest.filter(rnd, Math.max(n, 1));
      int k = 1 + rnd.nextInt(rnd.nextBoolean() ? 12 : n + 5);
      int maxDist = rnd.nextInt(3) == 0 ? rnd.nextInt(bits + 1) : Integer.MAX_VALUE;
      String what = loops + " " + Randoms.describe(seed) + " bits=" + bits + " n=" + n + " k=" + k + " accept=" + accept
          + " maxDist=" + maxDist + " " + (mask == null ? "no mask" : LayerMasks.describe(mask));
      ScanKernel.Words s = ScanKernel.Words.of(q, ScanSearcher.checkMask(codes.layout(), mask), w);

      // one run [0, n), ordinals = positions
      TopK top = new TopK(k);
      ScanKernel.knn(loops, s, codes.words(), w, 0, n, null, accept, top, maxDist);
      assertEquals(BruteForce.knnWithin(codes, q, k, accept, mask, maxDist), top.toHits(), what);

      // windows in random order into one top-k, ordinals a permutation (ties go to the smaller ordinal)
      int[] ords = Randoms.permutation(n, rnd);
      TopK windows = new TopK(k);
      for (int[] win : windows(rnd, n))
        ScanKernel.knn(loops, s, codes.words(), w, win[0], win[1], ords, accept, windows, maxDist);
      assertEquals(expected(codes, q, mask, ords, accept, k, maxDist), windows.toHits(), what + " windows");
    }
  }

  @Test
  void scalarWithinEqualsBruteForce() {
    checkWithin(Loops.SCALAR);
  }

  @Test
  void vectorWithinEqualsBruteForce() {
    assumeTrue(Loops.vectorUsable(), "no jdk.incubator.vector module or no 512-bit vectors in this JVM");
    checkWithin(Loops.VECTOR);
  }

  /** {@link ScanKernel#within}: one code of the block (or a separate query) against a run of the block, any radius. */
  private static void checkWithin(Loops loops) {
    for (int rep = 0; rep < 300; rep++) {
      long seed = Randoms.seed(5000 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int bits = rep % 2 == 0 ? BITS[rep / 2 % 8] : 1 + rnd.nextInt(6 * 64);
      int n = 1 + (rnd.nextBoolean() ? rnd.nextInt(40) : rnd.nextInt(600));
      CodeBlock codes = codes(rnd, n, bits, seed);
      int w = codes.wordsPerCode(), from = rnd.nextInt(n + 1), to = from + rnd.nextInt(n - from + 1);
      int radius = rnd.nextInt(4) == 0 ? rnd.nextInt(bits + 1) : rnd.nextInt(bits / 3 + 2);
      boolean own = rnd.nextBoolean();
      int x = rnd.nextInt(n);
      long[] q = own ? codes.words() : query(rnd, codes);
      int qOff = own ? x * w : 0;
      int[] out = new int[n];
      int found = ScanKernel.within(loops, q, qOff, codes.words(), w, from, to, radius, out);
      Hits all = BruteForce.radius(codes, own ? codes.code(x) : q, radius, null, null);
      int[] expected = Arrays.stream(all.ords()).filter(y -> y >= from && y < to).sorted().toArray();
      assertEquals(Arrays.toString(expected), Arrays.toString(Arrays.copyOf(out, found)),
          loops + " " + Randoms.describe(seed) + " bits=" + bits + " n=" + n + " [" + from + ", " + to + ") radius=" + radius
              + (own ? " code " + x : " separate query"));
    }
  }

  /** Uniform, ReLU-like (dead, always-on and copied units) or a few distinct codes repeated. */
  private static CodeBlock codes(SplittableRandom rnd, int n, int bits, long seed) {
    return switch (rnd.nextInt(3)) {
      case 0 -> SyntheticCodes.uniform(n, bits, seed);
      case 1 -> bits >= 2 && n > 0 ? SyntheticCodes.reluLike(n, bits / 2, bits - bits / 2, seed).codes() : SyntheticCodes.uniform(n, bits, seed);
      default -> {
        CodeBlock pool = SyntheticCodes.uniform(1 + rnd.nextInt(3), bits, seed);
        int w = pool.wordsPerCode();
        long[] words = new long[n * w];
        for (int i = 0; i < n; i++) System.arraycopy(pool.words(), rnd.nextInt(pool.size()) * w, words, i * w, w);
        yield new CodeBlock(pool.layout(), n, words);
      }
    };
  }

  /** A stored code with a few bits flipped (a fresh random code when there are none). */
  private static long[] query(SplittableRandom rnd, CodeBlock codes) {
    int bits = codes.layout().bits();
    long[] q = codes.size() > 0 ? codes.code(rnd.nextInt(codes.size())) : SyntheticCodes.uniform(1, bits, rnd.nextLong()).code(0);
    for (int f = rnd.nextInt(8); f > 0; f--) {
      int b = rnd.nextInt(bits);
      q[b >>> 6] ^= 1L << (b & 63);
    }
    return q;
  }

  /** None, a layer mask (some words whole, some cut, some skipped), or a mask touching one word only. */
  private static long[] mask(SplittableRandom rnd, CodeLayout layout) {
    return switch (rnd.nextInt(4)) {
      case 0 -> null;
      case 3 -> {
        long[] m = new long[layout.words()];
        m[rnd.nextInt(m.length)] = rnd.nextLong() | 1L << rnd.nextInt(Math.min(64, layout.bits()));
        yield m;
      }
      default -> LayerMasks.mask(layout, rnd);
    };
  }

  /** [0, n) cut at random places into windows of 0 to about 40 codes, in random order. */
  private static List<int[]> windows(SplittableRandom rnd, int n) {
    List<int[]> out = new ArrayList<>();
    for (int from = 0; from < n; ) {
      int to = Math.min(n, from + rnd.nextInt(41));
      out.add(new int[] {from, to});
      from = to;
    }
    for (int i = out.size() - 1; i > 0; i--) out.set(i, out.set(rnd.nextInt(i + 1), out.get(i)));
    return out;
  }

  /** The k smallest (distance, ordinal) pairs with the ordinals of {@code ords}, from the brute force's distances. */
  private static Hits expected(CodeBlock codes, long[] q, long[] mask, int[] ords, IntPredicate accept, int k, int maxDist) {
    Hits all = BruteForce.radius(codes, q, codes.layout().bits(), null, mask);
    int[] o = new int[all.size()], d = new int[all.size()];
    int size = 0;
    for (int i = 0; i < all.size(); i++) {
      int ord = ords[all.ord(i)];
      if ((accept == null || accept.test(ord)) && all.dist(i) <= maxDist) {
        o[size] = ord;
        d[size++] = all.dist(i);
      }
    }
    Hits sorted = Hits.sorted(o, d, size);
    int m = Math.min(k, sorted.size());
    return new Hits(Arrays.copyOf(sorted.ords(), m), Arrays.copyOf(sorted.dists(), m));
  }

  /**
   * The choice, made once per JVM: scalar by default, scalar without the module even when asked
   * for, vector when asked for with the module where the JVM has 512-bit vectors; each child also
   * scans and compares with the brute force.
   */
  @Test
  void chosenOncePerJvm() throws Exception {
    assertEquals("SCALAR ok", child("--add-modules=jdk.incubator.vector"));
    assertEquals("SCALAR ok", child("-Dactindex.simd=true"));
    assertEquals((Loops.vectorUsable() ? "VECTOR" : "SCALAR") + " ok", child("--add-modules=jdk.incubator.vector", "-Dactindex.simd=true"));
  }

  private static String child(String... jvmArgs) throws IOException, InterruptedException {
    List<String> cmd = new ArrayList<>(List.of(Path.of(System.getProperty("java.home"), "bin", "java").toString()));
    cmd.addAll(List.of(jvmArgs));
    cmd.addAll(List.of("-cp", System.getProperty("java.class.path"), Child.class.getName()));
    Process p = new ProcessBuilder(cmd).redirectError(ProcessBuilder.Redirect.DISCARD).start();
    String out = new String(p.getInputStream().readAllBytes(), StandardCharsets.UTF_8).trim();
    assertEquals(0, p.waitFor(), String.join(" ", cmd) + ": " + out);
    return out;
  }

  /** Prints the chosen loops and "ok" when a 10-NN scan of 1,000 ReLU-like codes equals the brute force. */
  static final class Child {
    public static void main(String[] args) {
      CodeBlock codes = SyntheticCodes.reluLike(1000, 128, 128, 7).codes();
      long[] q = codes.code(17);
      boolean ok = new ScanSearcher(codes).knn(q, 10, null, null).equals(BruteForce.knn(codes, q, 10, null, null));
      System.out.println(Loops.CHOSEN + (ok ? " ok" : " differs"));
    }
  }
}
