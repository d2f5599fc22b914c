package io.actindex.core;

import java.util.function.IntPredicate;

/**
 * Exact search over one immutable set of codes whose ordinals are {@code 0 .. size()-1}.
 *
 * <p>Every implementation returns exactly what a brute-force scan returns: the same ordinals, the
 * same distances, sorted by ascending distance, ties by ascending ordinal. {@code accept} (nullable:
 * accept all) filters ordinals (metadata filters, tombstones); {@code mask} (nullable: all bits)
 * restricts the distance to the bits it has set (per-layer search). Thread-safe.
 */
public interface CodeSearcher {

  CodeLayout layout();

  int size();

  /** The {@code k} nearest accepted codes (fewer if fewer are accepted). */
  Hits knn(long[] query, int k, IntPredicate accept, long[] mask);

  /**
   * The {@code k} nearest accepted codes among those at distance {@code <= maxDist}: for callers
   * that know an upper bound of the k-th distance already (a shared bound across segments). A
   * filter given as an {@link IdSet} over {@code 0..size()-1} is read directly (selectivity, walk).
   */
  default Hits knn(long[] query, int k, IntPredicate accept, long[] mask, int maxDist) {
    Hits h = knn(query, k, accept, mask);
    int m = 0;
    while (m < h.size() && h.dist(m) <= maxDist) m++;
    return m == h.size() ? h : new Hits(java.util.Arrays.copyOf(h.ords(), m), java.util.Arrays.copyOf(h.dists(), m));
  }

  /** Every accepted code at distance {@code <= radius} (inclusive). */
  Hits radius(long[] query, int radius, IntPredicate accept, long[] mask);

  default Hits knn(long[] query, int k) {
    return knn(query, k, null, null);
  }

  default Hits radius(long[] query, int radius) {
    return radius(query, radius, null, null);
  }
}
