package io.actindex.core;

/**
 * Scalar Hamming kernels over packed codes: the reference implementation ({@code Long.bitCount}).
 * Codes are given as (array, word offset); {@code words} is the number of 64-bit words per code.
 */
public final class Hamming {
  private Hamming() {}

  /** Hamming distance between two codes. */
  public static int distance(long[] a, int aOff, long[] b, int bOff, int words) {
    int d = 0;
    for (int i = 0; i < words; i++) d += Long.bitCount(a[aOff + i] ^ b[bOff + i]);
    return d;
  }

  /** Hamming distance between two codes of equal length that start at offset 0. */
  public static int distance(long[] a, long[] b) {
    if (a.length != b.length) throw new IllegalArgumentException("codes of " + a.length + " and " + b.length + " words");
    return distance(a, 0, b, 0, a.length);
  }

  /**
   * Hamming distance if it is at most {@code bound}; otherwise some value greater than {@code
   * bound}. Codes of 1, 2 or 4 words are counted in full (cheaper than branching); longer ones stop
   * early, checking the bound every 4 words.
   */
  public static int distanceBounded(long[] a, int aOff, long[] b, int bOff, int words, int bound) {
    switch (words) {
      case 1:
        return Long.bitCount(a[aOff] ^ b[bOff]);
      case 2:
        return Long.bitCount(a[aOff] ^ b[bOff]) + Long.bitCount(a[aOff + 1] ^ b[bOff + 1]);
      case 4:
        return Long.bitCount(a[aOff] ^ b[bOff]) + Long.bitCount(a[aOff + 1] ^ b[bOff + 1])
            + Long.bitCount(a[aOff + 2] ^ b[bOff + 2]) + Long.bitCount(a[aOff + 3] ^ b[bOff + 3]);
      default:
        break;
    }
    int d = 0, i = 0;
    for (; i + 4 <= words; i += 4) {
      d += Long.bitCount(a[aOff + i] ^ b[bOff + i]) + Long.bitCount(a[aOff + i + 1] ^ b[bOff + i + 1])
          + Long.bitCount(a[aOff + i + 2] ^ b[bOff + i + 2]) + Long.bitCount(a[aOff + i + 3] ^ b[bOff + i + 3]);
      if (d > bound) return d;
    }
    for (; i < words; i++) d += Long.bitCount(a[aOff + i] ^ b[bOff + i]);
    return d;
  }

  /** Hamming distance counted only over the bits set in {@code mask} (words long, offset 0). */
  public static int maskedDistance(long[] a, int aOff, long[] b, int bOff, long[] mask, int words) {
    int d = 0;
    for (int i = 0; i < words; i++) d += Long.bitCount((a[aOff + i] ^ b[bOff + i]) & mask[i]);
    return d;
  }

  /**
   * One-to-many: distances from {@code query} (at {@code qOff}) to codes {@code [from, to)} of
   * {@code codes}, written to {@code out[0 .. to-from)}.
   */
  public static void scan(long[] query, int qOff, long[] codes, int words, int from, int to, int[] out) {
    for (int i = from; i < to; i++) out[i - from] = distance(query, qOff, codes, i * words, words);
  }
}
