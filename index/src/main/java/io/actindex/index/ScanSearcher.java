package io.actindex.index;

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
    checkQuery(query, mask);
    if (k <= 0) return Hits.EMPTY;
    TopK top = new TopK(k);
    long[] data = codes.words();
    int w = codes.wordsPerCode(), n = codes.size();
    for (int i = 0; i < n; i++) {
      if (accept != null && !accept.test(i)) continue;
      int bound = top.bound();
      int d = mask == null
          ? Hamming.distanceBounded(query, 0, data, i * w, w, bound)
          : Hamming.maskedDistance(query, 0, data, i * w, mask, w);
      if (d <= bound) top.offer(i, d);
    }
    return top.toHits();
  }

  @Override
  public Hits radius(long[] query, int radius, IntPredicate accept, long[] mask) {
    checkQuery(query, mask);
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

  private void checkQuery(long[] query, long[] mask) {
    int w = codes.wordsPerCode();
    if (query.length != w)
      throw new IllegalArgumentException("query has " + query.length + " words, the codes have " + w);
    if (mask != null && mask.length != w)
      throw new IllegalArgumentException("mask has " + mask.length + " words, the codes have " + w);
  }
}
