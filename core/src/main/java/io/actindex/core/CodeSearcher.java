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

  /** Every accepted code at distance {@code <= radius} (inclusive). */
  Hits radius(long[] query, int radius, IntPredicate accept, long[] mask);

  default Hits knn(long[] query, int k) {
    return knn(query, k, null, null);
  }

  default Hits radius(long[] query, int radius) {
    return radius(query, radius, null, null);
  }
}
