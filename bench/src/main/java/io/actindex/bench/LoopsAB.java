package io.actindex.bench;

import io.actindex.core.Loops;
import io.actindex.core.ScanKernel;
import io.actindex.core.TopK;
import java.util.Arrays;
import java.util.Locale;
import java.util.SplittableRandom;

/**
 * The scalar and the vector loops of {@link ScanKernel} in one JVM, alternating query by query (on
 * a busy machine JMH runs of the two move by up to 1.5x between forks; this pairs them). {@code knn
 * BITS,... N REPS [none|first|second]}: exact 10-NN over N uniform codes, queries = 64 stored codes,
 * mask = a half of the bits; prints the best and the median per loops and their ratios. {@code
 * within BITS RADIUS}: the self-join's radius loop, each member of a bucket of random codes against
 * the later ones, buckets of 16 to 4,096 codes; prints ns per pair. Needs {@code --add-modules
 * jdk.incubator.vector} and 512-bit vectors. Run: {@code java --add-modules jdk.incubator.vector
 * -cp bench/target/benchmarks.jar io.actindex.bench.LoopsAB knn 64,256,1024 100000 30 none}.
 */
public final class LoopsAB {
  private LoopsAB() {}

  public static void main(String[] a) {
    if (!Loops.vectorUsable()) throw new IllegalStateException("needs --add-modules jdk.incubator.vector and 512-bit vectors");
    if (a[0].equals("knn")) knn(Arrays.stream(a[1].split(",")).mapToInt(Integer::parseInt).toArray(), Integer.parseInt(a[2]),
        Integer.parseInt(a[3]), a.length > 4 ? a[4] : "none");
    else within(Integer.parseInt(a[1]), Integer.parseInt(a[2]));
  }

  private static long[] random(SplittableRandom r, int n, int bits) {
    int w = (bits + 63) / 64;
    long[] data = new long[n * w];
    for (int i = 0; i < data.length; i++) data[i] = r.nextLong();
    if (bits % 64 != 0) for (int i = 0; i < n; i++) data[i * w + w - 1] &= (1L << (bits % 64)) - 1;
    return data;
  }

  private static void knn(int[] widths, int n, int reps, String half) {
    for (int bits : widths) {
      int w = (bits + 63) / 64;
      long[] data = random(new SplittableRandom(bits * 31L + n), n, bits), mask = null;
      if (!half.equals("none")) {
        mask = new long[w];
        for (int b = half.equals("first") ? 0 : bits / 2, end = half.equals("first") ? bits / 2 : bits; b < end; b++) mask[b >>> 6] |= 1L << b;
      }
      long[][] times = new long[2][reps * 64];
      int c = 0;
      for (int rep = 0; rep < reps; rep++)
        for (int i = 0; i < 64; i++, c++) {
          int at = (int) ((long) i * 7919 % n) * w;
          ScanKernel.Words s = ScanKernel.Words.of(Arrays.copyOfRange(data, at, at + w), mask, w);
          for (int t = 0; t < 2; t++) {
            Loops l = (rep + t) % 2 == 0 ? Loops.SCALAR : Loops.VECTOR; // alternate which goes first
            long t0 = System.nanoTime();
            ScanKernel.knn(l, s, data, w, 0, n, null, null, new TopK(10), Integer.MAX_VALUE);
            times[l.ordinal()][c] = System.nanoTime() - t0;
          }
        }
      for (long[] t : times) Arrays.sort(t);
      double bs = times[0][0] / 1e3, bv = times[1][0] / 1e3, ms = times[0][c / 2] / 1e3, mv = times[1][c / 2] / 1e3;
      System.out.printf(Locale.ROOT, "knn n=%d bits=%d mask=%s: scalar best %.1f median %.1f us, vector best %.1f median %.1f us;"
          + " vector/scalar best %.2f median %.2f%n", n, bits, half, bs, ms, bv, mv, bv / bs, mv / ms);
    }
  }

  private static void within(int bits, int radius) {
    int w = (bits + 63) / 64;
    for (int b : new int[] {16, 64, 256, 1024, 4096}) {
      SplittableRandom r = new SplittableRandom(b);
      long[][] buckets = new long[Math.max(1, 200_000 / b)][];
      for (int i = 0; i < buckets.length; i++) buckets[i] = random(r, b, bits);
      int[] out = new int[b];
      long[] best = {Long.MAX_VALUE, Long.MAX_VALUE};
      long found = 0;
      for (int rep = 0; rep < 15; rep++)
        for (int t = 0; t < 2; t++) {
          Loops l = (rep + t) % 2 == 0 ? Loops.SCALAR : Loops.VECTOR;
          long t0 = System.nanoTime();
          for (long[] cs : buckets) for (int x = 0; x < b; x++) found += ScanKernel.within(l, cs, x * w, cs, w, x + 1, b, radius, out);
          best[l.ordinal()] = Math.min(best[l.ordinal()], System.nanoTime() - t0);
        }
      double pairs = buckets.length * (b * (b - 1) / 2.0);
      System.out.printf(Locale.ROOT, "within bits=%d radius=%d bucket=%d: scalar %.2f, vector %.2f ns per pair; vector/scalar %.2f"
          + " (%d found)%n", bits, radius, b, best[0] / pairs, best[1] / pairs, (double) best[1] / best[0], found);
    }
  }
}
