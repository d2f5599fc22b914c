package io.actindex.core;

import java.util.Arrays;
import java.util.function.IntPredicate;

/**
 * A second exact reference for the adversarial tests: an independent loop over all codes that
 * counts, word by word with {@code Long.bitCount}, the positions where query and code differ
 * (the Hamming distance: R. W. Hamming, "Error detecting and error correcting codes", Bell System
 * Technical Journal 29(2), 1950), restricted to the mask's bits and to the layout's width (bits
 * past the width, in the query or the mask, never count), then sorts every accepted code by
 * (distance, ordinal). It shares no code with the searchers (not even {@link Hamming}), and differs
 * from {@link BruteForce} (bit by bit) in how it counts, so the two check each other.
 */
public final class PopcountReference {
  private PopcountReference() {}

  /** The distance of code {@code i} of {@code codes} to {@code q} over {@code mask} (nullable: all bits). */
  public static int distance(CodeBlock codes, int i, long[] q, long[] mask) {
    int w = codes.wordsPerCode(), bits = codes.layout().bits(), d = 0;
    long[] data = codes.words();
    for (int j = 0; j < w; j++) {
      long width = (j + 1) * 64 <= bits ? -1L : -1L >>> (64 - (bits - j * 64)); // this word's bits inside the width
      long m = mask == null ? -1L : mask[j];
      d += Long.bitCount((q[j] ^ data[i * w + j]) & m & width);
    }
    return d;
  }

  /** Every accepted code sorted by (distance, ordinal), as packed {@code dist << 32 | ordinal}. */
  private static long[] sortedAll(CodeBlock codes, long[] q, IntPredicate accept, long[] mask) {
    int n = codes.size();
    long[] all = new long[n];
    int m = 0;
    for (int i = 0; i < n; i++) if (accept == null || accept.test(i)) all[m++] = (long) distance(codes, i, q, mask) << 32 | i;
    all = Arrays.copyOf(all, m);
    Arrays.sort(all);
    return all;
  }

  /** The {@code k} nearest accepted codes at distance {@code <= maxDist}, ties by ordinal (k <= 0: none). */
  public static Hits knn(CodeBlock codes, long[] q, int k, IntPredicate accept, long[] mask, int maxDist) {
    long[] all = sortedAll(codes, q, accept, mask);
    int m = 0;
    while (m < all.length && m < Math.max(0, k) && (int) (all[m] >>> 32) <= maxDist) m++;
    return hits(all, m);
  }

  public static Hits knn(CodeBlock codes, long[] q, int k, IntPredicate accept, long[] mask) {
    return knn(codes, q, k, accept, mask, Integer.MAX_VALUE);
  }

  /** Every accepted code at distance {@code <= r}, by (distance, ordinal). */
  public static Hits radius(CodeBlock codes, long[] q, int r, IntPredicate accept, long[] mask) {
    long[] all = sortedAll(codes, q, accept, mask);
    int m = 0;
    while (m < all.length && (int) (all[m] >>> 32) <= r) m++;
    return hits(all, m);
  }

  private static Hits hits(long[] sorted, int m) {
    int[] o = new int[m], d = new int[m];
    for (int i = 0; i < m; i++) {
      o[i] = (int) sorted[i];
      d[i] = (int) (sorted[i] >>> 32);
    }
    return new Hits(o, d);
  }
}
