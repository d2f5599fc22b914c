package io.actindex.index.mih;

import io.actindex.core.CodeBlock;
import io.actindex.core.Hamming;
import io.actindex.core.ScanKernel;
import io.actindex.core.TopK;
import java.util.Arrays;
import java.util.function.IntPredicate;
import java.util.stream.IntStream;

/**
 * Exact k-NN by cluster pruning with the triangle inequality (Fukunaga and Narendra, "A Branch and
 * Bound Algorithm for Computing k-Nearest Neighbors", IEEE Trans. Computers, 1975, rules 1 and 2,
 * here in Hamming space with both sides of the inequality, as in LAESA: Micó, Oncina and Vidal 1994).
 *
 * <p>The codes are grouped around about {@code sqrt(n)} centres (bitwise majority of their members
 * on a sample, a few rounds: the code minimising the summed Hamming distance to a group), and copied
 * in cluster order, each cluster sorted by the distance {@code r(x)} of its codes to the centre. For
 * a query at distance {@code d(q,c)} from centre c, every member x has {@code d(q,x) >= |d(q,c) -
 * r(x)|}; so with the k-th best distance B so far, a cluster is skipped when {@code d(q,c) -
 * maxR(c) > B}, and inside a cluster only the run of codes with {@code r(x)} in {@code [d(q,c) - B,
 * d(q,c) + B]} (two binary searches) is scanned. Clusters are visited nearest first, so B drops
 * fast. Exactness needs only that {@code r(x)} is the true distance to the centre (it is recomputed
 * on load); how well the centres fit the data decides the speed alone.
 *
 * <p>Codes from a network's activations sit on a low-dimensional set (the input space), so most
 * clusters lie far from a query and drop out; uniform random codes have no such structure and the
 * planner ({@link #estimate}) sends their queries elsewhere. Immutable, thread-safe.
 */
final class Partition {
  /** Smallest block worth partitioning. */
  static final int MIN_CODES = 4096;
  private static final int MAX_CLUSTERS = 4096, ROUNDS = 3, SAMPLE_PER_CLUSTER = 32;

  final int words;
  final long[] centres; // clusters * words
  final int[] start; // cluster c is positions start[c] .. start[c+1]-1
  final long[] codes; // copies of the codes, cluster by cluster, each by ascending radius
  final int[] ords; // position -> ordinal
  final int[] maxRadius; // per cluster
  // cluster c's first position at radius >= r, for r in 0..maxRadius[c]: radiusStart[radiusBase[c] + r]
  final int[] radiusBase, radiusStart;
  private final int maxOfMaxRadius;

  Partition(CodeBlock block, long[] centres, int[] start, int[] ords) {
    this.words = block.wordsPerCode();
    this.centres = centres;
    this.start = start;
    this.ords = ords;
    int n = ords.length, w = words, clusters = start.length - 1;
    long[] data = block.words();
    codes = new long[Math.multiplyExact(n, w)];
    char[] radius = new char[n]; // position -> distance to its centre
    maxRadius = new int[clusters];
    radiusBase = new int[clusters + 1];
    int mm = 0;
    for (int c = 0; c < clusters; c++) {
      for (int i = start[c]; i < start[c + 1]; i++) {
        System.arraycopy(data, ords[i] * w, codes, i * w, w);
        int r = Hamming.distance(centres, c * w, data, ords[i] * w, w);
        if (i > start[c] && r < radius[i - 1]) throw new IllegalArgumentException("cluster " + c + " not sorted by radius at position " + i);
        radius[i] = (char) r;
        maxRadius[c] = Math.max(maxRadius[c], r);
        mm = Math.max(mm, r);
      }
      radiusBase[c + 1] = radiusBase[c] + maxRadius[c] + 1;
    }
    maxOfMaxRadius = mm;
    radiusStart = new int[radiusBase[clusters]];
    for (int c = 0; c < clusters; c++)
      for (int r = 0, i = start[c]; r <= maxRadius[c]; r++) {
        while (i < start[c + 1] && radius[i] < r) i++;
        radiusStart[radiusBase[c] + r] = i;
      }
  }

  int clusters() {
    return start.length - 1;
  }

  long bytes() {
    return 8L * (codes.length + centres.length) + 4L * (start.length + ords.length + maxRadius.length + radiusBase.length + radiusStart.length);
  }

  /** The partition of {@code block}, or null when it is too small (or its codes too wide for char radii). */
  static Partition build(CodeBlock block) {
    return build(block, MIN_CODES);
  }

  /** The partition of {@code block} if it has at least {@code minCodes} codes (else null). */
  static Partition build(CodeBlock block, int minCodes) {
    int n = block.size(), w = block.wordsPerCode();
    if (n < Math.max(1, minCodes) || block.layout().bits() > Character.MAX_VALUE) return null;
    int clusters = (int) Math.min(MAX_CLUSTERS, Math.round(Math.sqrt(n)));
    long[] data = block.words();
    int sample = Math.min(n, clusters * SAMPLE_PER_CLUSTER);
    int[] sampleOrd = new int[sample];
    for (int i = 0; i < sample; i++) sampleOrd[i] = (int) ((long) i * n / sample);
    long[] centres = new long[clusters * w];
    for (int c = 0; c < clusters; c++) System.arraycopy(data, sampleOrd[(int) ((long) c * sample / clusters)] * w, centres, c * w, w);
    int[] assign = new int[n];
    for (int round = 0; round < ROUNDS; round++) {
      IntStream.range(0, sample).parallel().forEach(i -> assign[i] = nearest(centres, clusters, data, sampleOrd[i] * w, w));
      majority(block, sampleOrd, assign, centres, clusters);
    }
    int[] dist = new int[n];
    Assigner assigner = new Assigner(centres, clusters, w);
    IntStream.range(0, (n + 4095) >>> 12).parallel().forEach(chunk -> {
      for (int i = chunk << 12, end = Math.min(n, i + 4096); i < end; i++) {
        int c = assigner.nearest(data, i * w);
        assign[i] = c;
        dist[i] = Hamming.distance(centres, c * w, data, i * w, w);
      }
    });
    // order by (cluster, radius, ordinal): a counting sort on the packed key
    long[] key = new long[n];
    for (int i = 0; i < n; i++) key[i] = ((long) assign[i] << 48) | ((long) dist[i] << 32) | i;
    Arrays.parallelSort(key);
    int[] ords = new int[n], start = new int[clusters + 1];
    for (int i = 0; i < n; i++) {
      ords[i] = (int) key[i];
      start[(int) (key[i] >>> 48) + 1]++;
    }
    for (int c = 0; c < clusters; c++) start[c + 1] += start[c];
    return new Partition(block, centres, start, ords);
  }

  private static int nearest(long[] centres, int clusters, long[] data, int off, int w) {
    int best = 0, bestD = Integer.MAX_VALUE;
    for (int c = 0; c < clusters; c++) {
      int d = Hamming.distanceBounded(data, off, centres, c * w, w, bestD);
      if (d < bestD) {
        bestD = d;
        best = c;
      }
    }
    return best;
  }

  /**
   * Nearest centre of a code without comparing it with every centre: the nearest of a few pivot
   * centres, p, is found first; the other centres are tried in ascending distance from p, and since
   * {@code d(x,c) >= d(p,c) - d(x,p)}, the walk stops once {@code d(p,c) - d(x,p)} reaches the best
   * distance so far (Elkan, "Using the Triangle Inequality to Accelerate k-Means", ICML 2003, lemma 1
   * in its one-sided form). Any nearest centre will do: exactness of the search does not depend on it.
   */
  private static final class Assigner {
    private static final int PIVOTS = 32;
    final long[] centres;
    final int clusters, w, pivots;
    final int[][] byDistance; // per pivot: all centres by ascending distance to it
    final int[][] distances; // per pivot: those distances

    Assigner(long[] centres, int clusters, int w) {
      this.centres = centres;
      this.clusters = clusters;
      this.w = w;
      pivots = Math.min(PIVOTS, clusters);
      byDistance = new int[pivots][];
      distances = new int[pivots][];
      for (int p = 0; p < pivots; p++) {
        int pc = (int) ((long) p * clusters / pivots);
        long[] key = new long[clusters];
        for (int c = 0; c < clusters; c++) key[c] = ((long) Hamming.distance(centres, pc * w, centres, c * w, w) << 32) | c;
        Arrays.sort(key);
        byDistance[p] = new int[clusters];
        distances[p] = new int[clusters];
        for (int i = 0; i < clusters; i++) {
          byDistance[p][i] = (int) key[i];
          distances[p][i] = (int) (key[i] >>> 32);
        }
      }
    }

    int nearest(long[] data, int off) {
      int bestPivot = 0, dxp = Integer.MAX_VALUE;
      for (int p = 0; p < pivots; p++) {
        int d = Hamming.distance(data, off, centres, (int) ((long) p * clusters / pivots) * w, w);
        if (d < dxp) {
          dxp = d;
          bestPivot = p;
        }
      }
      int best = (int) ((long) bestPivot * clusters / pivots), bestD = dxp;
      int[] order = byDistance[bestPivot], dist = distances[bestPivot];
      for (int i = 0; i < clusters && dist[i] - dxp < bestD; i++) {
        int c = order[i];
        int d = Hamming.distanceBounded(data, off, centres, c * w, w, bestD);
        if (d < bestD) {
          bestD = d;
          best = c;
        }
      }
      return best;
    }
  }

  /** Moves each centre to the bitwise majority of its sample members (a centre with none stays). */
  private static void majority(CodeBlock block, int[] sampleOrd, int[] assign, long[] centres, int clusters) {
    int bits = block.layout().bits(), w = block.wordsPerCode();
    int[] size = new int[clusters];
    int[] ones = new int[clusters * bits];
    long[] data = block.words();
    for (int i = 0; i < sampleOrd.length; i++) {
      int c = assign[i], off = sampleOrd[i] * w;
      size[c]++;
      for (int j = 0; j < w; j++)
        for (long x = data[off + j]; x != 0; x &= x - 1) ones[c * bits + (j << 6) + Long.numberOfTrailingZeros(x)]++;
    }
    for (int c = 0; c < clusters; c++) {
      if (size[c] == 0) continue;
      Arrays.fill(centres, c * w, (c + 1) * w, 0L);
      for (int b = 0; b < bits; b++) if (2 * ones[c * bits + b] > size[c]) centres[c * w + (b >>> 6)] |= 1L << (b & 63);
    }
  }

  // ------------------------------------------------------------------ search

  /** Per-query state: the clusters in visiting order, their distances and current windows. */
  static final class Visit {
    int[] order = new int[0], dq = new int[0], lo = new int[0], hi = new int[0];
    int[] counts = new int[0];

    void ensure(int clusters, int bits) {
      if (order.length < clusters) {
        order = new int[clusters];
        dq = new int[clusters];
        lo = new int[clusters];
        hi = new int[clusters];
      }
      if (counts.length < bits + 2) counts = new int[bits + 2];
    }
  }

  /**
   * First step of a query: distances to every centre, clusters sorted nearest first (a counting
   * sort on the distance), then, when no cap is given, the nearest clusters scanned until the top
   * holds k codes (or all are seen). Returns the number of clusters fully scanned.
   */
  int begin(long[] q, int bits, Visit v, IntPredicate accept, TopK top, int k, int maxDist) {
    int clusters = clusters(), w = words;
    sortCentres(q, centres, clusters, w, bits, v);
    int done = 0;
    // without a cap from elsewhere, the nearest clusters provide the first k-th distance; with one,
    // the windows under the cap do (a cap may leave fewer than k codes reachable in this block)
    while (maxDist == Integer.MAX_VALUE && done < clusters && top.size() < k) {
      int c = v.order[done];
      ScanKernel.knn(q, null, codes, w, start[c], start[c + 1], ords, accept, top, maxDist);
      done++;
    }
    return done;
  }

  /**
   * Sorts {@code count} centres of {@code w} words (codes of {@code bits} bits) by their distance to
   * {@code q}, nearest first, by a counting sort: {@code v.order} gets the centres, {@code v.dq}
   * their distances.
   */
  static void sortCentres(long[] q, long[] centres, int count, int w, int bits, Visit v) {
    v.ensure(count, bits);
    int[] counts = v.counts;
    Arrays.fill(counts, 0, bits + 2, 0);
    int[] d = v.lo; // scratch for the distances before sorting
    for (int c = 0; c < count; c++) {
      d[c] = Hamming.distance(q, 0, centres, c * w, w);
      counts[d[c] + 1]++;
    }
    for (int x = 0; x <= bits; x++) counts[x + 1] += counts[x];
    for (int c = 0; c < count; c++) {
      int p = counts[d[c]]++;
      v.order[p] = c;
      v.dq[p] = d[c];
    }
  }

  /**
   * Upper bound of the codes the rest of the query ({@link #finish}) will compare, given the
   * current k-th distance {@code bound}; also fixes each remaining cluster's window for it.
   */
  long estimate(Visit v, int from, int bound) {
    bound = Math.min(bound, Character.MAX_VALUE); // no distance exceeds it: keeps dq + bound from overflowing
    long total = 0;
    for (int p = from; p < clusters(); p++) {
      int c = v.order[p], dq = v.dq[p];
      if (dq - maxRadius[c] > bound) {
        v.lo[p] = v.hi[p] = 0;
        continue;
      }
      int lo = atRadius(c, dq - bound), hi = atRadius(c, dq + bound + 1);
      v.lo[p] = lo;
      v.hi[p] = hi;
      total += hi - lo;
    }
    return total;
  }

  /** Scans the remaining clusters' windows (narrowed as the k-th distance drops). */
  void finish(long[] q, Visit v, int from, IntPredicate accept, TopK top, int maxDist) {
    int w = words;
    for (int p = from; p < clusters(); p++) {
      int lo = v.lo[p], hi = v.hi[p];
      if (lo >= hi) continue;
      int c = v.order[p], dq = v.dq[p], bound = Math.min(Character.MAX_VALUE, Math.min(maxDist, top.bound()));
      if (dq - maxOfMaxRadius > bound) break; // no later cluster can hold a code within the bound
      if (dq - maxRadius[c] > bound) continue;
      lo = Math.max(lo, atRadius(c, dq - bound)); // the bound only drops: the window only narrows
      hi = Math.min(hi, atRadius(c, dq + bound + 1));
      ScanKernel.knn(q, null, codes, w, lo, hi, ords, accept, top, maxDist);
    }
  }

  /**
   * The first position of cluster c whose code lies at least {@code r} from the centre (the end of
   * the cluster if none): one table look-up instead of a binary search, whose dependent reads miss
   * the cache when many small clusters are visited.
   */
  int atRadius(int c, int r) {
    if (r <= 0) return start[c];
    if (r > maxRadius[c]) return start[c + 1];
    return radiusStart[radiusBase[c] + r];
  }

}
