package io.actindex.core;

import java.util.function.IntPredicate;

/**
 * The plain popcount scan: compares the query with every code. The reference every other search
 * path is checked against, and the fallback the planner uses when nothing prunes.
 */
public final class ScanSearcher implements CodeSearcher {
  private final CodeBlock codes;
  private final int words; // per code
  private final long ghost; // the bits of the last word past the layout's width

  public ScanSearcher(CodeBlock codes) {
    this.codes = codes;
    this.words = codes.wordsPerCode();
    this.ghost = CodeBlock.ghostMask(codes.layout());
  }

  @Override
  public CodeLayout layout() {
    return codes.layout();
  }

  @Override
  public int size() {
    return codes.size();
  }

  /**
   * A filter given as an {@link IdSet} whose share of the codes is at most this is walked member by
   * member instead of scanned past (common practice: a selective filter drives the search). Walking
   * 1M 256-bit codes, a member cost 17-24 ns at 1%, 15-48 ns at 3%, but 52-80 ns at 10% (members
   * a few cache lines apart defeat the prefetcher; the scan reads a code in about 1.6 ns), so only
   * sets up to 4% are walked (was 12.5%: a 10% filter took 3.6x the scan).
   */
  public static final double WALK_SHARE = 0.04;

  @Override
  public Hits knn(long[] query, int k, IntPredicate accept, long[] mask) {
    return knn(query, k, accept, mask, Integer.MAX_VALUE);
  }

  /**
   * Like {@link #knn(long[], int, IntPredicate, long[])} but only codes at distance {@code <=
   * maxDist} can enter, for callers that already know an upper bound of the k-th distance (other
   * segments searched before this one).
   */
  @Override
  public Hits knn(long[] query, int k, IntPredicate accept, long[] mask, int maxDist) {
    query = checkQuery(words, ghost, query, mask);
    mask = checkMask(words, ghost, mask);
    int n = codes.size();
    if (k <= 0 || n == 0 || maxDist < 0) return Hits.EMPTY;
    TopK top = new TopK(Math.min(k, n));
    if (accept instanceof IdSet set) {
      if (set.size() != n) throw new IllegalArgumentException("filter over " + set.size() + " ordinals, searcher has " + n);
      if (set.isEmpty()) return Hits.EMPTY;
      if (set.count() <= WALK_SHARE * n) {
        ScanKernel.knnMembers(query, mask, codes.words(), codes.wordsPerCode(), set, top, maxDist);
        return top.toHits();
      }
    }
    ScanKernel.knn(query, mask, codes.words(), codes.wordsPerCode(), 0, n, null, accept, top, maxDist);
    return top.toHits();
  }

  @Override
  public Hits radius(long[] query, int radius, IntPredicate accept, long[] mask) {
    query = checkQuery(words, ghost, query, mask);
    mask = checkMask(words, ghost, mask);
    long[] data = codes.words();
    int w = codes.wordsPerCode(), n = codes.size();
    if (radius < 0 || n == 0 || accept instanceof IdSet set && set.isEmpty()) return Hits.EMPTY;
    ScanKernel.Words sel = ScanKernel.Words.of(query, mask, w);
    int[] ords = new int[16], dists = new int[16];
    int size = 0;
    for (int i = 0; i < n; i++) {
      int d = sel.distance(data, i * w, w, radius);
      if (d > radius || accept != null && !accept.test(i)) continue;
      if (size == ords.length) {
        ords = java.util.Arrays.copyOf(ords, size * 2);
        dists = java.util.Arrays.copyOf(dists, size * 2);
      }
      ords[size] = i;
      dists[size++] = d;
    }
    return Hits.sorted(ords, dists, size);
  }

  /**
   * Checks the shapes and returns the query with any bits beyond the layout's width cleared (they
   * take no part in a distance, as in a bit-by-bit comparison).
   */
  public static long[] checkQuery(CodeLayout layout, long[] query, long[] mask) {
    return checkQuery(layout.words(), CodeBlock.ghostMask(layout), query, mask);
  }

  /**
   * {@link #checkQuery(CodeLayout, long[], long[])} for a searcher that keeps its layout's words per
   * code {@code w} and ghost bits (a layout's width is a sum over its segments: asked four times per
   * query, it was a visible share of a masked query that ends after a few codes).
   */
  public static long[] checkQuery(int w, long ghost, long[] query, long[] mask) {
    if (query.length != w)
      throw new IllegalArgumentException("query has " + query.length + " words, the codes have " + w);
    if (mask != null && mask.length != w)
      throw new IllegalArgumentException("mask has " + mask.length + " words, the codes have " + w);
    if ((query[w - 1] & ghost) == 0) return query;
    long[] clean = query.clone();
    clean[w - 1] &= ~ghost;
    return clean;
  }

  /**
   * A mask (already checked by {@link #checkQuery}) in the form the loops like best: null when it
   * covers every bit of the layout, else with the ghost bits of the last word set (they are zero in
   * every code and query, so a layer that ends a code counts as whole words). The argument is not
   * changed.
   */
  public static long[] checkMask(CodeLayout layout, long[] mask) {
    return mask == null ? null : checkMask(layout.words(), CodeBlock.ghostMask(layout), mask);
  }

  /** {@link #checkMask(CodeLayout, long[])} with the layout's words per code and ghost bits given. */
  public static long[] checkMask(int w, long ghost, long[] mask) {
    if (mask == null) return null;
    boolean all = true;
    for (int j = 0; j < w && all; j++) all = (j == w - 1 ? mask[j] | ghost : mask[j]) == -1L;
    if (all) return null;
    if (ghost == 0 || (mask[w - 1] & ghost) == ghost) return mask;
    long[] widened = mask.clone();
    widened[w - 1] |= ghost;
    return widened;
  }

}
