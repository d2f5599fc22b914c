package io.actindex.query.stats;

import io.actindex.core.BadParameterException;
import java.util.Arrays;

/**
 * Minimum-cost perfect matching of an n x n integer cost matrix: the Hungarian method (Kuhn 1955)
 * in its shortest-augmenting-path form with dual potentials (as in Jonker &amp; Volgenant,
 * "A shortest augmenting path algorithm for dense and sparse linear assignment problems",
 * Computing 38, 1987): each row is added by a Dijkstra-like search over reduced costs, then the
 * potentials are updated, {@code O(n^3)} in the worst case. Exact (integer arithmetic).
 */
public final class Assignment {
  private Assignment() {}

  /** The optimal matching: {@code columnOf[i]} for row i, and its total cost. */
  public record Result(int[] columnOf, long cost) {}

  /** {@code cost}: row-major n x n, entries at most about 2^61 / n. */
  public static Result solve(int n, long[] cost) {
    if (cost.length != (long) n * n) throw new BadParameterException("cost", " has " + cost.length + " entries; n x n needs " + (long) n * n);
    final long inf = Long.MAX_VALUE / 4;
    long[] u = new long[n + 1], v = new long[n + 1], minv = new long[n + 1];
    int[] rowOfCol = new int[n + 1], way = new int[n + 1]; // 1-based; rowOfCol[0] = the row being added
    boolean[] used = new boolean[n + 1];
    for (int i = 1; i <= n; i++) {
      rowOfCol[0] = i;
      int j0 = 0;
      Arrays.fill(minv, inf);
      Arrays.fill(used, false);
      do {
        used[j0] = true;
        int i0 = rowOfCol[j0], j1 = 0;
        long delta = inf, ui = u[i0];
        int base = (i0 - 1) * n - 1;
        for (int j = 1; j <= n; j++) {
          if (used[j]) continue;
          long cur = cost[base + j] - ui - v[j];
          if (cur < minv[j]) {
            minv[j] = cur;
            way[j] = j0;
          }
          if (minv[j] < delta) {
            delta = minv[j];
            j1 = j;
          }
        }
        for (int j = 0; j <= n; j++) {
          if (used[j]) {
            u[rowOfCol[j]] += delta;
            v[j] -= delta;
          } else {
            minv[j] -= delta;
          }
        }
        j0 = j1;
      } while (rowOfCol[j0] != 0);
      do {
        int j1 = way[j0];
        rowOfCol[j0] = rowOfCol[j1];
        j0 = j1;
      } while (j0 != 0);
    }
    int[] columnOf = new int[n];
    long total = 0;
    for (int j = 1; j <= n; j++) {
      int i = rowOfCol[j] - 1;
      columnOf[i] = j - 1;
      total += cost[i * n + j - 1];
    }
    return new Result(columnOf, total);
  }
}
