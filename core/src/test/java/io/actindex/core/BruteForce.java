package io.actindex.core;

import java.util.function.IntPredicate;

/** The simplest possible exact search, written independently of {@link ScanSearcher}: sort all. */
public final class BruteForce {
  private BruteForce() {}

  public static Hits knn(CodeBlock codes, long[] q, int k, IntPredicate accept, long[] mask) {
    return take(all(codes, q, accept, mask), k);
  }

  /** The first k of {@link #knn} cut at distance {@code maxDist} (what a capped k-NN must return). */
  public static Hits knnWithin(CodeBlock codes, long[] q, int k, IntPredicate accept, long[] mask, int maxDist) {
    Hits h = knn(codes, q, k, accept, mask);
    int m = 0;
    while (m < h.size() && h.dist(m) <= maxDist) m++;
    return take(h, m);
  }

  public static Hits radius(CodeBlock codes, long[] q, int r, IntPredicate accept, long[] mask) {
    Hits all = all(codes, q, accept, mask);
    int m = 0;
    while (m < all.size() && all.dist(m) <= r) m++;
    return take(all, m);
  }

  private static Hits all(CodeBlock codes, long[] q, IntPredicate accept, long[] mask) {
    int n = codes.size(), bits = codes.layout().bits();
    int[] o = new int[n], d = new int[n];
    int size = 0;
    for (int i = 0; i < n; i++) {
      if (accept != null && !accept.test(i)) continue;
      int dist = 0;
      for (int b = 0; b < bits; b++) {
        boolean counted = mask == null || (mask[b >>> 6] >>> (b & 63) & 1) != 0;
        boolean qb = (q[b >>> 6] >>> (b & 63) & 1) != 0;
        if (counted && qb != codes.bit(i, b)) dist++;
      }
      o[size] = i;
      d[size++] = dist;
    }
    return Hits.sorted(o, d, size);
  }

  private static Hits take(Hits h, int k) {
    int m = Math.min(k, h.size());
    return new Hits(java.util.Arrays.copyOf(h.ords(), m), java.util.Arrays.copyOf(h.dists(), m));
  }
}
