package io.actindex.index.mih;

import io.actindex.core.IdSet;
import io.actindex.core.Loops;
import io.actindex.core.ScanKernel;
import io.actindex.core.TopK;
import java.util.Optional;
import java.util.SplittableRandom;

/**
 * The planner's cost constants in nanoseconds on this machine: a scanned code (per code and per
 * word), a probed bucket (dense and sparse table), a candidate verified by random access in a block
 * of {@value #NEAR_BYTES} bytes and in one of {@value #FAR_BYTES} bytes (far beyond the caches: a
 * cache and TLB miss each), a member of a walked filter, a code of a partition window. Only their
 * ratios matter. {@link #machine()} takes the machine's calibrated costs ({@link
 * PlannerCalibration}, {@code actindex calibrate-planner}) or else measures them once per JVM with
 * short loops (about 0.2 s) the first time a searcher is built; every tables payload stores the
 * costs it was built with, and a loaded searcher plans with the calibrated costs if the machine has
 * them, else with those.
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

  /** This machine's costs: calibrated, else measured on first use (see the class comment). */
  static PlannerCosts machine() {
    Optional<PlannerCosts> calibrated = PlannerCalibration.current();
    if (calibrated.isPresent()) return calibrated.get();
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
   * Times the loops the planner chooses between: each is warmed up until compiled, then the loops
   * are timed in turn, round after round, and each keeps its best round. Timed in turn, a burst of
   * load from elsewhere slows every loop alike instead of one of them (timed one after the other,
   * builds on this shared machine stored dense probes from 2.8 to 38 ns beside the same scan cost),
   * and only the costs' ratios matter. The scan is timed through the scalar loops whatever {@link
   * Loops#CHOSEN} is: a few runs do not get the vector loops compiled (cold, they took 3-10x
   * longer), and costs stored in a payload should not depend on a JVM option.
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
    long[] far = farBlock();
    int[] farOrds = new int[1 << 14];
    for (int i = 0; i < farOrds.length; i++) farOrds[i] = far == null ? 0 : rnd.nextInt(far.length / 4);
    Loop[] loops = {
      () -> { // 0: a scan of 4-word codes
        TopK top = new TopK(10);
        ScanKernel.knn(Loops.SCALAR, ScanKernel.Words.of(q, null, 4), words, 4, 0, n, null, null, top, Integer.MAX_VALUE);
        return top.bound();
      },
      () -> { // 1: of 1-word codes
        TopK top = new TopK(10);
        ScanKernel.knn(Loops.SCALAR, ScanKernel.Words.of(q, null, 1), words, 1, 0, n, null, null, top, Integer.MAX_VALUE);
        return top.bound();
      },
      () -> { // 2: candidates verified by random access
        int s = 0;
        for (int ord : randomOrds) s += io.actindex.core.Hamming.distanceBounded(q, 0, words, ord * 4, 4, 256);
        return s;
      },
      () -> { // 3: dense buckets
        int s = 0;
        for (int ord : randomOrds) s += offsets[ord << 2] - offsets[(ord << 2) + 1];
        return s;
      },
      () -> { // 4: sparse buckets, less the dense part
        int s = 0;
        for (int ord : randomOrds) s += java.util.Arrays.binarySearch(sortedKeys, ord);
        return s;
      },
      () -> { // 5: a walked filter of 1%
        TopK top = new TopK(10);
        ScanKernel.knnMembers(q, null, words, 4, onePercent, top, Integer.MAX_VALUE);
        return top.bound();
      },
      () -> { // 6: candidates far beyond the caches
        int s = 0;
        if (far != null) for (int ord : farOrds) s += io.actindex.core.Hamming.distanceBounded(q, 0, far, ord * 4, 4, 256);
        return s;
      }
    };
    // the walk warms up a hundred runs: after a few it was timed before it was compiled (seen:
    // 160-210 ns per member, against about 20 compiled), which kept filters of 1% from being walked
    int[] warmUps = {5, 5, 5, 5, 5, 100, 5};
    double[] t = best(loops, warmUps, ROUNDS);
    double scan4 = t[0] / n, scan1 = t[1] / n, candidate = t[2] / randomOrds.length, dense = t[3] / randomOrds.length;
    double sparseProbe = t[4] / randomOrds.length + dense, walk = t[5] / onePercent.count();
    double farCost = far == null ? Double.NaN : t[6] / farOrds.length;
    double[] split = splitScan(scan1, scan4);
    double perCode = split[0], perWord = split[1];
    // a partition window is a short scan that starts with two binary searches: a scanned code plus
    // a share of the window's start (windows hold tens to thousands of codes)
    return new PlannerCosts(perCode, perWord, Math.max(0.5, dense), Math.max(1, sparseProbe), Math.max(1, candidate),
        Math.max(0.5, walk), 1.3 * scan4, Double.isNaN(farCost) ? Math.max(1, candidate) : Math.max(1, farCost));
  }

  /** Rounds of {@link #measure()}: each loop keeps its best. */
  private static final int ROUNDS = 7;

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
   * A block of {@link #FAR_BYTES} of 4-word codes for the far candidate; null (the caller takes the
   * near cost) in a heap of less than 8 times that, which holds no block that large.
   */
  private static long[] farBlock() {
    if (Runtime.getRuntime().maxMemory() < 8 * FAR_BYTES) return null;
    long[] far = new long[(int) (FAR_BYTES / 8)];
    for (int i = 0; i < far.length; i += 512) far[i] = i; // touch every page (zeroed memory may not be mapped yet)
    return far;
  }

  private interface Loop {
    long run();
  }

  private static long sink;

  /** Each loop's best time in ns over {@code rounds} rounds that run every loop once, after its warm-ups. */
  private static double[] best(Loop[] loops, int[] warmUps, int rounds) {
    double[] best = new double[loops.length];
    java.util.Arrays.fill(best, Double.MAX_VALUE);
    for (int i = 0; i < loops.length; i++)
      for (int j = 0; j < warmUps[i]; j++) sink += loops[i].run(); // compiled before it is timed
    for (int r = 0; r < rounds; r++)
      for (int i = 0; i < loops.length; i++) {
        long t0 = System.nanoTime();
        sink += loops[i].run();
        best[i] = Math.min(best[i], System.nanoTime() - t0);
      }
    return best;
  }
}
