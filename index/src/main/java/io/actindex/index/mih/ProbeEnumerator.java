package io.actindex.index.mih;

/**
 * Enumerates the flip masks of a multi-index probe: every {@code width}-bit mask with exactly
 * {@code rho} bits set, in increasing numeric order (Gosper's hack), so that {@code key ^ mask}
 * runs over all keys at Hamming distance exactly {@code rho} from {@code key}. Allocation-free:
 * <pre>{@code
 * for (long f = first(rho); f < limit(width); f = next(f)) probe(key ^ (int) f);
 * }</pre>
 */
final class ProbeEnumerator {
  private ProbeEnumerator() {}

  /** The smallest mask with {@code rho} bits set. */
  static long first(int rho) {
    return rho >= 64 ? -1L : (1L << rho) - 1;
  }

  /** One past the largest {@code width}-bit mask. */
  static long limit(int width) {
    return 1L << width;
  }

  /** The next larger mask with the same number of set bits (for a nonzero mask). */
  static long next(long mask) {
    if (mask == 0) return Long.MAX_VALUE; // rho = 0 has one mask
    long c = mask & -mask;
    long r = mask + c;
    return (((r ^ mask) >>> 2) / c) | r;
  }

  /** Binomial coefficient C(width, rho) as a double (probe counts for the planner). */
  static double count(int width, int rho) {
    if (rho < 0 || rho > width) return 0;
    double c = 1;
    for (int i = 0; i < rho; i++) c = c * (width - i) / (i + 1);
    return c;
  }
}
