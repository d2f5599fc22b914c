package io.actindex.index.mih;

import io.actindex.core.CodeBlock;
import io.actindex.core.Hamming;
import io.actindex.core.Hits;
import io.actindex.core.Loops;
import io.actindex.core.ScanKernel;
import java.util.Arrays;

/**
 * Every code's Hamming distance to its nearest other code of a block (-1 when it has none), exact:
 * a 1-NN search for each code, done for all of them at once. Codes held more than once answer 0
 * ({@link DistinctCodes}); the others are searched among the distinct codes. Where those have a
 * {@link Partition}, eight codes that are neighbours in it (one cluster, adjacent radii) are
 * searched together: they visit the clusters in the order of the nearest of their eight distances
 * to the centres, and in each cluster read once the union of their eight windows ({@code |d(q,c) -
 * r(x)| <= } that code's best distance so far), comparing every code read with all eight ({@link
 * ScanKernel#least8}). A union reads more codes than each window, never fewer, so each code still
 * sees every code its own search would. After the first cluster, a group whose windows hold more
 * codes than the searcher's tables are estimated to need for its eight searches (codes without
 * structure, where the tables win), and blocks too small for a partition, take the searcher's own
 * 1-NN per code instead (same answer).
 *
 * <p>The work is cut into {@link #tasks()} (the partition's clusters, or runs of codes) that may run
 * on any threads in any order; {@link #result()} once all have run.
 */
public final class NearestOthers {
  /** Codes per task without a partition. */
  private static final int RUN = 1024;
  /**
   * Price of one code read for a group of eight against the planner's price of one code of one
   * query's window ({@code partitionCode}). Measured on 300k skewed ReLU 256-bit codes: the groups
   * took about 2 ns per code read through the Vector API, one query's windows about 1 ns per code;
   * the scalar loop does eight distances per code.
   */
  private static final double GROUP_CODE = 2, GROUP_CODE_SCALAR = 8;
  /**
   * Fewest distinct codes for the Vector API loops (where {@link Loops#vectorUsable}); below, the
   * scalar loops. Until compiled the vector loops are slow (boxed vectors): over 5,000 ReLU codes of
   * 256 bits the pass took 1.0 s of CPU with them, 0.67 s one search per code; over 20,000, 1.15 s
   * and 1.20 s.
   */
  private static final int VECTOR_FROM = 20_000;

  private final CodeBlock codes;
  private final DistinctCodes distinct;
  private final MihSearcher searcher; // over the distinct codes
  private final Partition partition; // of the distinct codes; null: each code searched alone
  private final int[] answer; // by distinct code
  private final Loops loops;
  private final double groupCode;
  private final int maxRadius; // the largest radius of any cluster

  private NearestOthers(CodeBlock codes) {
    this.codes = codes;
    this.distinct = DistinctCodes.of(codes);
    CodeBlock d = distinct.codes();
    this.searcher = d.size() < 2 ? null : (MihSearcher) Searchers.build(d);
    this.partition = searcher == null ? null : searcher.partition;
    this.answer = new int[d.size()];
    int r = 0;
    if (partition != null) for (int x : partition.maxRadius) r = Math.max(r, x);
    this.maxRadius = r;
    this.loops = d.size() >= VECTOR_FROM && Loops.vectorUsable() ? Loops.VECTOR : Loops.SCALAR;
    this.groupCode = (loops == Loops.VECTOR ? GROUP_CODE : GROUP_CODE_SCALAR)
        * (searcher == null ? 1 : searcher.cost.partitionCode());
  }

  /** Prepares the pass over {@code codes} (finds the distinct codes and builds their searcher). */
  public static NearestOthers of(CodeBlock codes) {
    return new NearestOthers(codes);
  }

  /** Independent pieces of the work. */
  public int tasks() {
    if (partition != null) return partition.clusters();
    return (answer.length + RUN - 1) / RUN;
  }

  /** Runs piece {@code task} (0 .. tasks()-1); thread-safe across different tasks. */
  public void run(int task) {
    if (partition != null) {
      Partition p = partition;
      long[] q = new long[8 * p.words], best = new long[8];
      long[] dq = new long[8 * p.clusters()];
      for (int g = p.start[task], end = p.start[task + 1]; g < end; g += 8) group(g, Math.min(8, end - g), q, best, dq);
      return;
    }
    for (int u = task * RUN, to = Math.min(answer.length, u + RUN); u < to; u++) answer[u] = alone(u, Integer.MAX_VALUE);
  }

  /** Each code's distance to its nearest other code, by ordinal, after every task has run. */
  public int[] result() {
    int[] out = new int[codes.size()];
    for (int i = 0; i < out.length; i++) {
      int u = distinct.distinctOf(i);
      out[i] = distinct.holders(u) > 1 ? 0 : answer[u];
    }
    return out;
  }

  /** The nearest other distinct code of distinct code {@code u} within {@code cap}, by the searcher (-1: none). */
  private int alone(int u, int cap) {
    if (searcher == null || distinct.holders(u) > 1) return searcher == null ? -1 : 0;
    Hits h = searcher.knn(distinct.codes().code(u), 1, o -> o != u, null, cap);
    return h.size() == 0 ? -1 : h.dist(0);
  }

  /** The {@code m} (1..8) codes at partition positions {@code g..g+m-1}, searched together. */
  private void group(int g, int m, long[] q, long[] best, long[] dq) {
    Partition p = partition;
    int w = p.words, clusters = p.clusters();
    long[] pc = p.codes;
    for (int i = 0; i < 8; i++) { // lanes past m repeat the last code; their answers are not kept
      int at = g + Math.min(i, m - 1);
      for (int j = 0; j < w; j++) q[8 * j + i] = pc[at * w + j];
    }
    Arrays.fill(best, Long.MAX_VALUE);
    // the clusters by the nearest of the group's distances to their centres (packed, sorted)
    ScanKernel.distances8(loops, q, p.centres, w, 0, clusters, dq);
    long[] order = new long[clusters];
    for (int c = 0; c < clusters; c++) {
      long least = Long.MAX_VALUE;
      for (int i = 0; i < m; i++) least = Math.min(least, dq[8 * c + i]);
      order[c] = least << 32 | c;
    }
    Arrays.sort(order);
    for (int k = 0; k < clusters && !beyond(order[k], m, best); k++) {
      int c = (int) order[k];
      if (k == 1 && !worthIt(g, m, best, dq, order)) {
        for (int i = 0; i < m; i++) {
          int u = p.ords[g + i];
          answer[u] = alone(u, (int) Math.min(Integer.MAX_VALUE, best[i]));
        }
        return;
      }
      long window = window(c, m, best, dq);
      int lo = (int) (window >>> 32), hi = (int) window;
      if (lo >= hi) continue;
      // the group's own positions are read apart, each code skipping itself
      ScanKernel.least8(loops, q, pc, w, lo, Math.min(hi, g), best);
      ScanKernel.least8(loops, q, pc, w, Math.max(lo, g + m), hi, best);
      for (int y = Math.max(lo, g); y < Math.min(hi, g + m); y++)
        for (int i = 0; i < m; i++)
          if (y != g + i) best[i] = Math.min(best[i], Hamming.distance(pc, y * w, pc, (g + i) * w, w));
    }
    for (int i = 0; i < m; i++) answer[p.ords[g + i]] = best[i] == Long.MAX_VALUE ? -1 : (int) best[i];
  }

  /**
   * The union of the group's windows in cluster {@code c} (positions, lo in the high half, hi in
   * the low): a code with no distance yet reads the whole cluster; a code whose best distance b
   * rules the cluster out ({@code d(q,c) - maxRadius > b}) adds nothing.
   */
  private long window(int c, int m, long[] best, long[] dq) {
    Partition p = partition;
    int lo = Integer.MAX_VALUE, hi = Integer.MIN_VALUE;
    for (int i = 0; i < m; i++) {
      long b = best[i], d = dq[8 * c + i];
      if (b == Long.MAX_VALUE) {
        lo = Math.min(lo, p.start[c]);
        hi = Math.max(hi, p.start[c + 1]);
      } else if (d - p.maxRadius[c] <= b) {
        lo = Math.min(lo, p.atRadius(c, (int) (d - b)));
        hi = Math.max(hi, p.atRadius(c, (int) Math.min(Character.MAX_VALUE, d + b + 1)));
      }
    }
    return lo >= hi ? 0 : (long) lo << 32 | hi;
  }

  /**
   * Whether the cluster of {@code order} entry {@code o} (nearest group distance to its centre in
   * the high half), and every later one, lies beyond each code's best distance: {@code d(q,c) - r(x)
   * > best} for every member x of every code q.
   */
  private boolean beyond(long o, int m, long[] best) {
    long worst = 0;
    for (int i = 0; i < m; i++) worst = Math.max(worst, best[i]);
    return (o >>> 32) - maxRadius > worst;
  }

  /**
   * Whether the group goes on over the partition after its first cluster: the codes its windows
   * hold under the distances found so far, priced per code read for eight, against the tables'
   * estimated cost of the eight searches up to those distances.
   */
  private boolean worthIt(int g, int m, long[] best, long[] dq, long[] order) {
    long read = 0;
    for (int k = 1; k < order.length && !beyond(order[k], m, best); k++) {
      long window = window((int) order[k], m, best, dq);
      read += (int) window - (int) (window >>> 32);
    }
    double tables = 0;
    for (int i = 0; i < m; i++)
      tables += best[i] == Long.MAX_VALUE ? Double.POSITIVE_INFINITY
          : searcher.tablesCost(Arrays.copyOfRange(partition.codes, (g + i) * partition.words, (g + i + 1) * partition.words), (int) best[i]);
    return read * groupCode <= tables;
  }
}
