package io.actindex.index.store;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Hits;
import io.actindex.index.mih.SearchPlanOptions;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;

/**
 * Child JVM of {@link LargeSegmentTest} (it needs a larger heap than the test JVM): writes one
 * segment of {@code n} random codes of {@code bits} bits whose codes file passes 2 GiB, opens it
 * with {@link IndexReader}, and checks stored codes past the 2 GiB offset, exact k-NN and radius
 * answers against a brute-force scan over regenerated codes, and the full check. Prints one line
 * per step; any failure throws (exit code 1).
 */
public final class LargeSegmentChild {
  private LargeSegmentChild() {}

  static final int K = 10, RADIUS = 12;

  /** Word {@code index} of the codes: a SplitMix64 output (Steele, Lea and Flood, OOPSLA 2014), so any code regenerates alone. */
  static long word(long seed, long index) {
    long z = seed + (index + 1) * 0x9E3779B97F4A7C15L;
    z = (z ^ (z >>> 30)) * 0xBF58476D1CE4E5B9L;
    z = (z ^ (z >>> 27)) * 0x94D049BB133111EBL;
    return z ^ (z >>> 31);
  }

  public static void main(String[] args) throws Exception {
    Path dir = Path.of(args[0]);
    long seed = Long.parseLong(args[1]);
    int n = Integer.parseInt(args[2]), bits = Integer.parseInt(args[3]);
    if (bits % 64 != 0) throw new IllegalArgumentException("bits must be a multiple of 64");
    CodeLayout layout = CodeLayout.single("code", bits);
    int w = layout.words();
    // a code at ordinal >= firstPast starts at least 2^31 bytes into the codes (the header only adds)
    int firstPast = (int) ((1L << 31) / (8L * w));
    if (n <= firstPast) throw new IllegalArgumentException(n + " codes do not pass 2 GiB");
    long t0 = System.nanoTime();
    try (IndexWriter iw = IndexWriter.create(dir, layout, Map.of())) {
      long[] words = new long[Math.multiplyExact(n, w)];
      Arrays.parallelSetAll(words, i -> word(seed, i));
      // one table of 32 bits and no partition: the cheapest exact plan, so the test costs what the file costs
      iw.searchPlan(SearchPlanOptions.defaults().withPartition(false).withSubstrings(1));
      iw.add(new CodeBlock(layout, n, words), null);
    }
    long codesBytes = Files.size(dir.resolve(Segment.codesName(0)));
    if (codesBytes <= (1L << 31) + 8L * w * (n - firstPast - 1)) throw new AssertionError("codes file of " + codesBytes + " bytes");
    System.out.printf("written %d codes, %s %d bytes, %.1f s%n", n, Segment.codesName(0), codesBytes, (System.nanoTime() - t0) / 1e9);

    SplittableRandom rnd = new SplittableRandom(seed ^ 0x2_6161L);
    List<long[]> queries = new ArrayList<>();
    List<Integer> near = new ArrayList<>();
    for (int i = 0; i < 9; i++) {
      int ord = i < 6 ? firstPast + rnd.nextInt(n - firstPast) : i == 6 ? n - 1 : i == 7 ? 0 : n / 2;
      long[] q = code(seed, ord, w);
      for (int f = rnd.nextInt(9); f > 0; f--) {
        int b = rnd.nextInt(bits);
        q[b >>> 6] ^= 1L << (b & 63);
      }
      queries.add(q);
      near.add(ord);
    }
    for (int i = 0; i < 3; i++) {
      long[] q = new long[w];
      for (int j = 0; j < w; j++) q[j] = rnd.nextLong();
      queries.add(q);
    }

    t0 = System.nanoTime();
    List<Hits> knn = new ArrayList<>(), within = new ArrayList<>();
    try (IndexReader r = IndexReader.open(dir)) {
      System.out.printf("opened in %.1f s%n", (System.nanoTime() - t0) / 1e9);
      for (int ord : new int[] {firstPast, firstPast + 1, n - 1, near.get(0)})
        if (!Arrays.equals(r.code(ord), code(seed, ord, w))) throw new AssertionError("stored code " + ord + " differs");
      for (long[] q : queries) {
        knn.add(r.search(q, K, null, null));
        within.add(r.searchRadius(q, RADIUS, null, null));
      }
    }
    System.out.printf("searched %d queries%n", queries.size());

    // the reference: one pass over the regenerated codes, every query against every code, ties by id
    int qn = queries.size();
    long[][] best = new long[qn][K]; // (distance << 32 | id), ascending
    int[] filled = new int[qn];
    List<List<Integer>> inRadius = new ArrayList<>();
    for (int i = 0; i < qn; i++) inRadius.add(new ArrayList<>());
    long[] c = new long[w];
    for (int id = 0; id < n; id++) {
      for (int j = 0; j < w; j++) c[j] = word(seed, (long) id * w + j);
      for (int i = 0; i < qn; i++) {
        long[] q = queries.get(i);
        int d = 0;
        for (int j = 0; j < w; j++) d += Long.bitCount(q[j] ^ c[j]);
        if (d <= RADIUS) inRadius.get(i).add(id);
        long key = (long) d << 32 | id;
        long[] b = best[i];
        if (filled[i] < K) {
          int p = filled[i]++;
          while (p > 0 && b[p - 1] > key) b[p] = b[--p];
          b[p] = key;
        } else if (key < b[K - 1]) {
          int p = K - 1;
          while (p > 0 && b[p - 1] > key) b[p] = b[--p];
          b[p] = key;
        }
      }
    }
    for (int i = 0; i < qn; i++) {
      Hits h = knn.get(i);
      if (h.size() != K) throw new AssertionError("query " + i + ": " + h.size() + " hits");
      for (int j = 0; j < K; j++)
        if (h.ord(j) != (int) best[i][j] || h.dist(j) != (int) (best[i][j] >>> 32))
          throw new AssertionError("query " + i + " hit " + j + ": got id " + h.ord(j) + " at " + h.dist(j) + ", expected id "
              + (int) best[i][j] + " at " + (best[i][j] >>> 32));
      int[] got = within.get(i).ords().clone();
      Arrays.sort(got);
      int[] want = inRadius.get(i).stream().mapToInt(Integer::intValue).toArray();
      if (!Arrays.equals(got, want)) throw new AssertionError("query " + i + ": radius " + RADIUS + " ids " + Arrays.toString(got)
          + ", expected " + Arrays.toString(want));
      if (i < near.size() && (best[i][0] >>> 32) > 8) throw new AssertionError("query " + i + " is far from its own code");
    }
    System.out.printf("exact: %d k-NN and radius queries, %d of them near codes past 2 GiB%n", qn, 6);

    t0 = System.nanoTime();
    IndexCheck.Report report = IndexCheck.run(dir);
    if (!report.ok()) throw new AssertionError("check: " + report.firstDamaged());
    System.out.printf("full check passed in %.1f s%n", (System.nanoTime() - t0) / 1e9);
  }

  static long[] code(long seed, int ord, int w) {
    long[] c = new long[w];
    for (int j = 0; j < w; j++) c[j] = word(seed, (long) ord * w + j);
    return c;
  }
}
