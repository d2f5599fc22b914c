package io.actindex.cluster;

import io.actindex.core.Hamming;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;

/**
 * The verified pairs of one {@link Cell}, each pair of the whole join found in exactly one cell.
 *
 * <p>Inside a bucket of table {@code t}, two entries make a candidate when both are the codes' own
 * keys (substring distance 0), or one is a probe of {@code r <= rho} flips and the other an own key
 * (substring distance r) and the prober has the smaller id (the larger one's probe meets the same
 * pair in the other bucket). A candidate is kept when its full distance is within the radius and no
 * earlier table puts it within {@code rho} (it belongs to the first qualifying table), so every
 * pair comes out once without a set of seen pairs. A split bucket's cell {@code (i, j)} pairs block
 * i with block j ({@code i < j}) or block i with itself.
 */
final class CellJoin {
  private CellJoin() {}

  /** Receives one verified pair, {@code a < b}. */
  @FunctionalInterface
  interface PairSink {
    void pair(long a, long b, int distance);
  }

  static void pairs(Cell cell, Iterable<Entry> entries, SubstringPlan plan, PairSink out) {
    List<Entry> left = new ArrayList<>(), right = new ArrayList<>();
    for (Entry e : entries) (e.block == cell.bi ? left : right).add(e);
    int radius = plan.radius(), words = (plan.bits() + 63) >>> 6;
    boolean same = cell.bi == cell.bj;
    for (int i = 0; i < left.size(); i++) {
      Entry x = left.get(i);
      List<Entry> others = same ? left : right;
      for (int j = same ? i + 1 : 0; j < others.size(); j++) {
        Entry y = others.get(j);
        if (x.flips > 0 && (y.flips > 0 || x.id > y.id)) continue;
        if (y.flips > 0 && y.id > x.id) continue;
        int d = Hamming.distanceBounded(x.code, 0, y.code, 0, words, radius);
        if (d > radius || plan.seenEarlier(x.code, y.code, cell.table)) continue;
        if (x.id < y.id) out.pair(x.id, y.id, d);
        else out.pair(y.id, x.id, d);
      }
    }
  }

  /**
   * A spanning forest of the cell's pairs (union-find over the ids met): as many edges as merges,
   * at most one fewer than the entries, and the same connected components as all the pairs.
   * {@code stats[d]} counts the pairs at distance d.
   */
  static List<long[]> forest(Cell cell, Iterable<Entry> entries, SubstringPlan plan, long[] stats) {
    Map<Long, Integer> slot = new HashMap<>();
    List<Integer> parent = new ArrayList<>();
    List<long[]> edges = new ArrayList<>();
    pairs(cell, entries, plan, (a, b, d) -> {
      stats[d]++;
      int ra = find(parent, slot.computeIfAbsent(a, k -> add(parent)));
      int rb = find(parent, slot.computeIfAbsent(b, k -> add(parent)));
      if (ra == rb) return;
      parent.set(Math.max(ra, rb), Math.min(ra, rb));
      edges.add(new long[] {a, b});
    });
    return edges;
  }

  private static int add(List<Integer> parent) {
    parent.add(parent.size());
    return parent.size() - 1;
  }

  private static int find(List<Integer> parent, int x) {
    while (parent.get(x) != x) {
      int up = parent.get(parent.get(x));
      parent.set(x, up);
      x = up;
    }
    return x;
  }
}
