package io.actindex.bench;

/** Recall of an approximate k-NN answer against the exact one. */
public final class Recall {
  private Recall() {}

  /**
   * Mean over queries of |found ∩ truth| / |truth|, where truth holds the first {@code k} exact
   * rows of each query (recall@k as in the ANN benchmark literature: common practice).
   */
  public static double atK(int[][] truth, int[][] found, int k) {
    if (truth.length != found.length) throw new IllegalArgumentException(truth.length + " exact answers, " + found.length + " found");
    if (truth.length == 0) throw new IllegalArgumentException("no queries");
    double sum = 0;
    for (int q = 0; q < truth.length; q++) {
      int m = Math.min(k, truth[q].length);
      if (m == 0) {
        sum += 1;
        continue;
      }
      java.util.Set<Integer> t = new java.util.HashSet<>();
      for (int i = 0; i < m; i++) t.add(truth[q][i]);
      int hit = 0;
      java.util.Set<Integer> seen = new java.util.HashSet<>();
      for (int i = 0; i < Math.min(k, found[q].length); i++) if (seen.add(found[q][i]) && t.contains(found[q][i])) hit++;
      sum += (double) hit / m;
    }
    return sum / truth.length;
  }
}
