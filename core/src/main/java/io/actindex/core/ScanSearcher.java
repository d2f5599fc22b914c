package io.actindex.core;

import java.util.function.IntPredicate;

/**
 * The plain popcount scan: compares the query with every code. The reference every other search
 * path is checked against, and the fallback the planner uses when nothing prunes.
 */
public final class ScanSearcher implements CodeSearcher {
  private final CodeBlock codes;

  public ScanSearcher(CodeBlock codes) {
    this.codes = codes;
  }

  @Override
  public CodeLayout layout() {
    return codes.layout();
  }

  @Override
  public int size() {
    return codes.size();
  }

  @Override
  public Hits knn(long[] query, int k, IntPredicate accept, long[] mask) {
    return knn(query, k, accept, mask, Integer.MAX_VALUE);
  }

  /**
   * Expert: like {@link #knn(long[], int, IntPredicate, long[])} but only codes at distance {@code
   * <= maxDist} can enter, for callers that already know an upper bound of the k-th distance.
   */
  public Hits knn(long[] query, int k, IntPredicate accept, long[] mask, int maxDist) {
    query = checkQuery(query, mask);
    if (k <= 0 || codes.size() == 0) return Hits.EMPTY;
    TopK top = new TopK(Math.min(k, codes.size()));
    long[] data = codes.words();
    int w = codes.wordsPerCode(), n = codes.size();
    if (w == 4 && accept == null && mask == null) return knn4(query, top, data, n, maxDist);
    int bound = maxDist;
    for (int i = 0, off = 0; i < n; i++, off += w) {
      if (accept != null && !accept.test(i)) continue;
      int d = mask == null
          ? Hamming.distanceBounded(query, 0, data, off, w, bound)
          : Hamming.maskedDistance(query, 0, data, off, mask, w);
      if (d <= bound) {
        top.offer(i, d);
        bound = Math.min(maxDist, top.bound());
      }
    }
    return top.toHits();
  }

  /**
   * The common case of 256-bit codes without filter or mask: the query's words stay in registers
   * (the compiler cannot keep them there itself, since both arrays are long[] and may alias).
   */
  private static Hits knn4(long[] query, TopK top, long[] data, int n, int maxDist) {
    long q0 = query[0], q1 = query[1], q2 = query[2], q3 = query[3];
    int bound = maxDist;
    for (int i = 0, off = 0; i < n; i++, off += 4) {
      int d = Long.bitCount(data[off] ^ q0) + Long.bitCount(data[off + 1] ^ q1)
          + Long.bitCount(data[off + 2] ^ q2) + Long.bitCount(data[off + 3] ^ q3);
      if (d <= bound) {
        top.offer(i, d);
        bound = Math.min(maxDist, top.bound());
      }
    }
    return top.toHits();
  }

  @Override
  public Hits radius(long[] query, int radius, IntPredicate accept, long[] mask) {
    query = checkQuery(query, mask);
    long[] data = codes.words();
    int w = codes.wordsPerCode(), n = codes.size();
    int[] ords = new int[16], dists = new int[16];
    int size = 0;
    for (int i = 0; i < n; i++) {
      if (accept != null && !accept.test(i)) continue;
      int d = mask == null
          ? Hamming.distanceBounded(query, 0, data, i * w, w, radius)
          : Hamming.maskedDistance(query, 0, data, i * w, mask, w);
      if (d <= radius) {
        if (size == ords.length) {
          ords = java.util.Arrays.copyOf(ords, size * 2);
          dists = java.util.Arrays.copyOf(dists, size * 2);
        }
        ords[size] = i;
        dists[size++] = d;
      }
    }
    return Hits.sorted(ords, dists, size);
  }

  /**
   * Checks the shapes and returns the query with any bits beyond the layout's width cleared (they
   * take no part in a distance, as in a bit-by-bit comparison).
   */
  public static long[] checkQuery(CodeLayout layout, long[] query, long[] mask) {
    int w = layout.words();
    if (query.length != w)
      throw new IllegalArgumentException("query has " + query.length + " words, the codes have " + w);
    if (mask != null && mask.length != w)
      throw new IllegalArgumentException("mask has " + mask.length + " words, the codes have " + w);
    long ghost = CodeBlock.ghostMask(layout);
    if ((query[w - 1] & ghost) == 0) return query;
    long[] clean = query.clone();
    clean[w - 1] &= ~ghost;
    return clean;
  }

  private long[] checkQuery(long[] query, long[] mask) {
    return checkQuery(codes.layout(), query, mask);
  }
}
