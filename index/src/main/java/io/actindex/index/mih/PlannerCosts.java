package io.actindex.index.mih;

import io.actindex.core.IdSet;
import io.actindex.core.Loops;
import io.actindex.core.ScanKernel;
import io.actindex.core.TopK;
import java.util.SplittableRandom;

/**
 * The planner's cost constants in nanoseconds on this machine: a scanned code (per code and per
 * word), a probed bucket (dense and sparse table), a candidate verified by random access in a block
 * of {@value #NEAR_BYTES} bytes and in one of {@value #FAR_BYTES} bytes (far beyond the caches: a
 * cache and TLB miss each), a member of a walked filter, a code of a partition window. Only their ratios matter. {@link #machine()}
 * measures them once per JVM with short loops (about 50 ms) the first time a searcher is built;
 * every tables payload stores the costs it was built with, and a loaded searcher plans with those.
 */
record PlannerCosts(double scanPerCode, double scanPerWord, double probeDense, double probeSparse, double candidate,
    double walk, double partitionCode, double candidateFar) {

  /** Block sizes of the two candidate measurements. */
  static final long NEAR_BYTES = 8L << 20, FAR_BYTES = 64L << 20;

  PlannerCosts {
    for (double x : new double[] {scanPerCode, scanPerWord, probeDense, probeSparse, candidate, walk, partitionCode, candidateFar})
      if (!(x > 0 && x < 1e6)) throw new IllegalArgumentException("planner cost " + x + " is outside (0, 1e6) ns");
  }

  /**
   * Fixed values, for tests that check planner choices independent of the machine (and for payloads
   * of version 1, which stored none); related as {@link #measure()} relates them (a partition code
   * 1.3 scanned 4-word codes).
   */
  static PlannerCosts defaults() {
    return new PlannerCosts(0.4, 0.3, 20, 50, 30, 3, 1.3 * (0.4 + 4 * 0.3), 30);
  }

  /** Costs stored in a tables payload of version 2 (no far candidate: it is taken as the near one), and of version 3. */
  static final int COUNT_V2 = 7, COUNT = 8;

  double[] toArray() {
    return new double[] {scanPerCode, scanPerWord, probeDense, probeSparse, candidate, walk, partitionCode, candidateFar};
  }

  /** From {@link #toArray()}, or its first {@link #COUNT_V2} values. */
  static PlannerCosts of(double[] a) {
    return new PlannerCosts(a[0], a[1], a[2], a[3], a[4], a[5], a[6], a.length > COUNT_V2 ? a[7] : a[4]);
  }

  /**
   * Cost of verifying one candidate by random access in a block of {@code bytes}: the near cost up
   * to {@link #NEAR_BYTES}, the far cost from {@link #FAR_BYTES}, linear in log(bytes) between.
   */
  double candidate(long bytes) {
    if (bytes <= NEAR_BYTES) return candidate;
    if (bytes >= FAR_BYTES) return Math.max(candidate, candidateFar);
    double f = Math.log((double) bytes / NEAR_BYTES) / Math.log((double) FAR_BYTES / NEAR_BYTES);
    return candidate + f * Math.max(0, candidateFar - candidate);
  }

  /** Cost of scanning n codes of w words. */
  double scan(int n, int w) {
    return n * (scanPerCode + scanPerWord * w);
  }

  private static volatile PlannerCosts measured;

  /** This machine's costs, measured on first use (see the class comment). */
  static PlannerCosts machine() {
    PlannerCosts c = measured;
    if (c == null) {
      synchronized (PlannerCosts.class) {
        if (measured == null) measured = measure();
        c = measured;
      }
    }
    return c;
  }

  /**
   * Times the loops the planner chooses between, each the best of a few runs after a warm-up. The
   * scan is timed through the scalar loops whatever {@link Loops#CHOSEN} is: a few runs do not
   * get the vector loops compiled (cold, they took 3-10x longer), and costs stored in a payload
   * should not depend on a JVM option.
   */
  static PlannerCosts measure() {
    int n = 1 << 18; // 8 MiB of 4-word codes: larger than the caches close to the core
    SplittableRandom rnd = new SplittableRandom(42);
    long[] words = new long[n * 4];
    for (int i = 0; i < words.length; i++) words[i] = rnd.nextLong();
    long[] q = {rnd.nextLong(), rnd.nextLong(), rnd.nextLong(), rnd.nextLong()};
    int[] randomOrds = new int[1 << 14];
    for (int i = 0; i < randomOrds.length; i++) randomOrds[i] = rnd.nextInt(n);
    long[] sparse = new long[(n + 63) >>> 6];
    for (int i = 0; i < n; i += 100) sparse[i >>> 6] |= 1L << (i & 63);
    IdSet onePercent = IdSet.of(sparse, n);
    int[] offsets = new int[(1 << 20) + 1];
    for (int i = 0; i < offsets.length; i++) offsets[i] = rnd.nextInt(n);
    int[] sortedKeys = new int[1 << 16];
    for (int i = 0; i < sortedKeys.length; i++) sortedKeys[i] = i * 7;
    double scan4 = best(() -> {
      TopK top = new TopK(10);
      ScanKernel.knn(Loops.SCALAR, ScanKernel.Words.of(q, null, 4), words, 4, 0, n, null, null, top, Integer.MAX_VALUE);
      return top.bound();
    }) / n;
    double scan1 = best(() -> {
      TopK top = new TopK(10);
      ScanKernel.knn(Loops.SCALAR, ScanKernel.Words.of(q, null, 1), words, 1, 0, n, null, null, top, Integer.MAX_VALUE);
      return top.bound();
    }) / n;
    double candidate = best(() -> {
      int s = 0;
      for (int ord : randomOrds) s += io.actindex.core.Hamming.distanceBounded(q, 0, words, ord * 4, 4, 256);
      return s;
    }) / randomOrds.length;
    double dense = best(() -> {
      int s = 0;
      for (int ord : randomOrds) s += offsets[ord << 2] - offsets[(ord << 2) + 1];
      return s;
    }) / randomOrds.length;
    double sparseProbe = best(() -> {
      int s = 0;
      for (int ord : randomOrds) s += java.util.Arrays.binarySearch(sortedKeys, ord);
      return s;
    }) / randomOrds.length + dense;
    double far = farCandidate(q);
    // the walk is timed only after a hundred runs: a few runs time it before it is compiled (seen:
    // 160-210 ns per member, against about 20 compiled), which kept filters of 1% from being walked
    double walk = best(() -> {
      TopK top = new TopK(10);
      ScanKernel.knnMembers(q, null, words, 4, onePercent, top, Integer.MAX_VALUE);
      return top.bound();
    }, 100) / onePercent.count();
    double[] split = splitScan(scan1, scan4);
    double perCode = split[0], perWord = split[1];
    // a partition window is a short scan that starts with two binary searches: a scanned code plus
    // a share of the window's start (windows hold tens to thousands of codes)
    return new PlannerCosts(perCode, perWord, Math.max(0.5, dense), Math.max(1, sparseProbe), Math.max(1, candidate),
        Math.max(0.5, walk), 1.3 * scan4, Double.isNaN(far) ? Math.max(1, candidate) : Math.max(1, far));
  }

  /** Bounds of the per-word share of a 4-word code's scan cost (the defaults give 0.19). */
  static final double MIN_WORD_SHARE = 0.1, MAX_WORD_SHARE = 0.22;

  /**
   * Per-code and per-word scan costs from the times per code of a 1-word and a 4-word scan. Their
   * difference is small beside the noise of a loaded machine (seen: per-word 0.01 ns in one build,
   * 0.65 in the next), so the per-word cost is held within {@link #MIN_WORD_SHARE}..{@link
   * #MAX_WORD_SHARE} of the 4-word cost, and the two always add up to the measured 4-word cost.
   */
  static double[] splitScan(double scan1, double scan4) {
    double perWord = Math.clamp((scan4 - scan1) / 3, MIN_WORD_SHARE * scan4, MAX_WORD_SHARE * scan4);
    return new double[] {Math.max(0.01, scan4 - 4 * perWord), Math.max(0.01, perWord)};
  }

  /**
   * A candidate verified at a random place of a {@link #FAR_BYTES} block of 4-word codes; NaN (the
   * caller takes the near cost) in a heap of less than 8 times that, which holds no block that large.
   */
  private static double farCandidate(long[] q) {
    if (Runtime.getRuntime().maxMemory() < 8 * FAR_BYTES) return Double.NaN;
    long[] far = new long[(int) (FAR_BYTES / 8)];
    for (int i = 0; i < far.length; i += 512) far[i] = i; // touch every page (zeroed memory may not be mapped yet)
    SplittableRandom rnd = new SplittableRandom(7);
    int codes = far.length / 4;
    int[] ords = new int[1 << 14];
    for (int i = 0; i < ords.length; i++) ords[i] = rnd.nextInt(codes);
    return best(() -> {
      int s = 0;
      for (int ord : ords) s += io.actindex.core.Hamming.distanceBounded(q, 0, far, ord * 4, 4, 256);
      return s;
    }) / ords.length;
  }

  private interface Loop {
    long run();
  }

  private static long sink;

  private static double best(Loop loop) {
    return best(loop, 5);
  }

  private static double best(Loop loop, int warmUps) {
    for (int i = 0; i < warmUps; i++) sink += loop.run(); // warm-up: compiled before it is timed
    long best = Long.MAX_VALUE;
    for (int i = 0; i < 5; i++) {
      long t0 = System.nanoTime();
      sink += loop.run();
      best = Math.min(best, System.nanoTime() - t0);
    }
    return best;
  }
}
