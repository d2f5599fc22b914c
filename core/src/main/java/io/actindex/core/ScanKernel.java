package io.actindex.core;

import java.util.function.IntPredicate;

/**
 * The k-NN scan loop over a run of packed codes, shared by the plain scan and by index paths that
 * scan parts of a code array (clusters of the partition). One loop per code width of 1, 2, 4 and 8
 * words keeps the query and mask words in registers (the compiler cannot do that itself: both are
 * {@code long[]} and may alias the codes); other widths stop counting once the bound is passed.
 * A mask is applied as one AND per word (no mask: all ones), so masked search takes the same loop.
 *
 * <p>Distance first: the filter is asked only about codes that would enter the top k, so a filter
 * that accepts most codes costs almost nothing, and a slow predicate is called rarely.
 */
public final class ScanKernel {
  private ScanKernel() {}

  /**
   * Offers to {@code top} every code {@code i} in {@code [from, to)} of {@code data} (w words per
   * code) whose distance to {@code q} (under {@code mask}, nullable) is at most {@code maxDist} and
   * at most the running k-th distance, and that {@code accept} (nullable) accepts. The code at
   * position i is offered as ordinal {@code ords == null ? i : ords[i]}, and {@code accept} is asked
   * about that ordinal. {@code q} must have its ghost bits cleared.
   */
  public static void knn(long[] q, long[] mask, long[] data, int w, int from, int to, int[] ords,
      IntPredicate accept, TopK top, int maxDist) {
    switch (w) {
      case 1 -> knn1(q, mask, data, from, to, ords, accept, top, maxDist);
      case 2 -> knn2(q, mask, data, from, to, ords, accept, top, maxDist);
      case 4 -> knn4(q, mask, data, from, to, ords, accept, top, maxDist);
      case 8 -> knn8(q, mask, data, from, to, ords, accept, top, maxDist);
      default -> knnAny(q, mask, data, w, from, to, ords, accept, top, maxDist);
    }
  }

  /**
   * {@link #knn} (no mask) over two runs at once: positions {@code [aFrom, aTo)} of {@code a} and
   * {@code [bFrom, bTo)} of {@code b}, offered as {@code aOrds[i]} and {@code bOrds[i]}. Reading
   * two runs in step keeps two streams of memory reads in flight, which pays when the runs are
   * short (a few hundred codes at random places, as the windows of small clusters are); for 4-word
   * codes it is one loop, for other widths it is the two runs one after the other.
   */
  public static void knnPair(long[] q, int w, long[] a, int aFrom, int aTo, int[] aOrds, long[] b, int bFrom, int bTo,
      int[] bOrds, IntPredicate accept, TopK top, int maxDist) {
    int both = Math.min(aTo - aFrom, bTo - bFrom);
    if (w == 4) {
      long q0 = q[0], q1 = q[1], q2 = q[2], q3 = q[3];
      int bound = Math.min(maxDist, top.bound());
      for (int t = 0, i = aFrom, j = bFrom, ai = aFrom * 4, bj = bFrom * 4; t < both; t++, i++, j++, ai += 4, bj += 4) {
        int da = Long.bitCount(a[ai] ^ q0) + Long.bitCount(a[ai + 1] ^ q1) + Long.bitCount(a[ai + 2] ^ q2) + Long.bitCount(a[ai + 3] ^ q3);
        int db = Long.bitCount(b[bj] ^ q0) + Long.bitCount(b[bj + 1] ^ q1) + Long.bitCount(b[bj + 2] ^ q2) + Long.bitCount(b[bj + 3] ^ q3);
        if (da <= bound) bound = offer(i, da, aOrds, accept, top, maxDist, bound);
        if (db <= bound) bound = offer(j, db, bOrds, accept, top, maxDist, bound);
      }
    } else {
      both = 0;
    }
    knn(q, null, a, w, aFrom + both, aTo, aOrds, accept, top, maxDist);
    knn(q, null, b, w, bFrom + both, bTo, bOrds, accept, top, maxDist);
  }

  private static long m(long[] mask, int i) {
    return mask == null ? -1L : mask[i];
  }

  /** Offers one code that passed the distance test; returns the new bound. */
  private static int offer(int i, int d, int[] ords, IntPredicate accept, TopK top, int maxDist, int bound) {
    int ord = ords == null ? i : ords[i];
    if (accept != null && !accept.test(ord)) return bound;
    top.offer(ord, d);
    return Math.min(maxDist, top.bound());
  }

  private static void knn1(long[] q, long[] mask, long[] data, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = q[0], m0 = m(mask, 0);
    int bound = Math.min(maxDist, top.bound());
    for (int i = from; i < to; i++) {
      int d = Long.bitCount((data[i] ^ q0) & m0);
      if (d <= bound) bound = offer(i, d, ords, accept, top, maxDist, bound);
    }
  }

  private static void knn2(long[] q, long[] mask, long[] data, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = q[0], q1 = q[1], m0 = m(mask, 0), m1 = m(mask, 1);
    int bound = Math.min(maxDist, top.bound());
    for (int i = from, off = from * 2; i < to; i++, off += 2) {
      int d = Long.bitCount((data[off] ^ q0) & m0) + Long.bitCount((data[off + 1] ^ q1) & m1);
      if (d <= bound) bound = offer(i, d, ords, accept, top, maxDist, bound);
    }
  }

  private static void knn4(long[] q, long[] mask, long[] data, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = q[0], q1 = q[1], q2 = q[2], q3 = q[3];
    int bound = Math.min(maxDist, top.bound());
    if (mask == null) { // the common case without the four ANDs
      for (int i = from, off = from * 4; i < to; i++, off += 4) {
        int d = Long.bitCount(data[off] ^ q0) + Long.bitCount(data[off + 1] ^ q1)
            + Long.bitCount(data[off + 2] ^ q2) + Long.bitCount(data[off + 3] ^ q3);
        if (d <= bound) bound = offer(i, d, ords, accept, top, maxDist, bound);
      }
      return;
    }
    long m0 = mask[0], m1 = mask[1], m2 = mask[2], m3 = mask[3];
    for (int i = from, off = from * 4; i < to; i++, off += 4) {
      int d = Long.bitCount((data[off] ^ q0) & m0) + Long.bitCount((data[off + 1] ^ q1) & m1)
          + Long.bitCount((data[off + 2] ^ q2) & m2) + Long.bitCount((data[off + 3] ^ q3) & m3);
      if (d <= bound) bound = offer(i, d, ords, accept, top, maxDist, bound);
    }
  }

  private static void knn8(long[] q, long[] mask, long[] data, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = q[0], q1 = q[1], q2 = q[2], q3 = q[3], q4 = q[4], q5 = q[5], q6 = q[6], q7 = q[7];
    long m0 = m(mask, 0), m1 = m(mask, 1), m2 = m(mask, 2), m3 = m(mask, 3);
    long m4 = m(mask, 4), m5 = m(mask, 5), m6 = m(mask, 6), m7 = m(mask, 7);
    int bound = Math.min(maxDist, top.bound());
    for (int i = from, off = from * 8; i < to; i++, off += 8) {
      int d = Long.bitCount((data[off] ^ q0) & m0) + Long.bitCount((data[off + 1] ^ q1) & m1)
          + Long.bitCount((data[off + 2] ^ q2) & m2) + Long.bitCount((data[off + 3] ^ q3) & m3);
      if (d > bound) continue;
      d += Long.bitCount((data[off + 4] ^ q4) & m4) + Long.bitCount((data[off + 5] ^ q5) & m5)
          + Long.bitCount((data[off + 6] ^ q6) & m6) + Long.bitCount((data[off + 7] ^ q7) & m7);
      if (d <= bound) bound = offer(i, d, ords, accept, top, maxDist, bound);
    }
  }

  private static void knnAny(long[] q, long[] mask, long[] data, int w, int from, int to, int[] ords,
      IntPredicate accept, TopK top, int maxDist) {
    long[] qm = masked(q, mask, w); // bits outside the mask never differ
    int bound = Math.min(maxDist, top.bound());
    for (int i = from, off = from * w; i < to; i++, off += w) {
      int d = boundedDistance(qm, mask, data, off, w, bound);
      if (d <= bound) bound = offer(i, d, ords, accept, top, maxDist, bound);
    }
  }

  /** Masked distance (query already masked) if at most bound, else some value above it. */
  private static int maskedBounded(long[] qm, long[] mask, long[] data, int off, int w, int bound) {
    int d = 0, j = 0;
    for (; j + 4 <= w; j += 4) {
      d += Long.bitCount((data[off + j] & mask[j]) ^ qm[j]) + Long.bitCount((data[off + j + 1] & mask[j + 1]) ^ qm[j + 1])
          + Long.bitCount((data[off + j + 2] & mask[j + 2]) ^ qm[j + 2]) + Long.bitCount((data[off + j + 3] & mask[j + 3]) ^ qm[j + 3]);
      if (d > bound) return d;
    }
    for (; j < w; j++) d += Long.bitCount((data[off + j] & mask[j]) ^ qm[j]);
    return d;
  }

  /**
   * Like {@link #knn} over the members of {@code set} only (ordinals = positions), in ascending
   * order: the path for a selective filter, whose cost follows the set's size, not the code count.
   */
  public static void knnMembers(long[] q, long[] mask, long[] data, int w, IdSet set, TopK top, int maxDist) {
    long[] qm = masked(q, mask, w);
    int bound = Math.min(maxDist, top.bound());
    for (int i = 0, words = (set.size() + 63) >>> 6; i < words; i++)
      for (long x = set.word(i); x != 0; x &= x - 1) {
        int ord = (i << 6) + Long.numberOfTrailingZeros(x);
        int d = boundedDistance(qm, mask, data, ord * w, w, bound);
        if (d <= bound) {
          top.offer(ord, d);
          bound = Math.min(maxDist, top.bound());
        }
      }
  }

  /** The query with the bits outside {@code mask} cleared (the query itself when mask is null). */
  public static long[] masked(long[] q, long[] mask, int w) {
    if (mask == null) return q;
    long[] qm = new long[w];
    for (int j = 0; j < w; j++) qm[j] = q[j] & mask[j];
    return qm;
  }

  /** Distance under an optional mask ({@code qm} already masked) if at most bound, else some value above it. */
  public static int boundedDistance(long[] qm, long[] mask, long[] data, int off, int w, int bound) {
    return mask == null ? Hamming.distanceBounded(qm, 0, data, off, w, bound) : maskedBounded(qm, mask, data, off, w, bound);
  }

  /** The exact distance of one code under an optional mask (no bound). */
  public static int distance(long[] q, long[] mask, long[] data, int off, int w) {
    return mask == null ? Hamming.distance(q, 0, data, off, w) : Hamming.maskedDistance(q, 0, data, off, mask, w);
  }
}
