package io.actindex.core;

import java.util.SplittableRandom;

/**
 * Seeds for randomized tests. The base seed comes from {@code -Dtests.seed=...} when given,
 * otherwise from the clock; every failure message should carry {@link #describe(long)} so the run
 * can be repeated. {@link SeedReporter} (registered for every module's tests) also prints the
 * reproduce line for any failure of a test that took a seed, exceptions of the code under test
 * included.
 */
public final class Randoms {
  private Randoms() {}

  private static final long BASE = initBase();

  private static long initBase() {
    String s = System.getProperty("tests.seed", "");
    if (!s.isBlank()) return Long.parseUnsignedLong(s.trim(), 16);
    return new SplittableRandom().nextLong();
  }

  /** The base seed of this run. */
  public static long base() {
    return BASE;
  }

  private static final java.util.concurrent.atomic.AtomicLong HANDED_OUT = new java.util.concurrent.atomic.AtomicLong();

  /** A seed for the {@code i}-th repetition of a test. */
  public static long seed(int i) {
    HANDED_OUT.incrementAndGet();
    return new SplittableRandom(BASE + 0x9E3779B97F4A7C15L * i).nextLong();
  }

  /** How many seeds {@link #seed(int)} has handed out so far ({@link SeedReporter} tells randomized tests by it). */
  static long handedOut() {
    return HANDED_OUT.get();
  }

  /** A text that tells how to repeat a failure with this base seed. */
  public static String describe(long seed) {
    return "seed=" + Long.toHexString(seed) + " (repeat the run with -Dtests.seed=" + Long.toHexString(BASE) + ")";
  }

  /** A uniformly random permutation of 0..n-1 (Fisher-Yates). */
  public static int[] permutation(int n, SplittableRandom rnd) {
    int[] p = new int[n];
    for (int i = 0; i < n; i++) p[i] = i;
    for (int i = n - 1; i > 0; i--) {
      int j = rnd.nextInt(i + 1), t = p[i];
      p[i] = p[j];
      p[j] = t;
    }
    return p;
  }
}
