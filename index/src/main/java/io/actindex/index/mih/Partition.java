package io.actindex.index.mih;

import io.actindex.core.CodeBlock;
import io.actindex.core.Hamming;
import io.actindex.core.IdSet;
import io.actindex.core.ScanKernel;
import io.actindex.core.TopK;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Map;
import java.util.concurrent.ConcurrentHashMap;
import java.util.function.IntPredicate;
import java.util.stream.IntStream;

/**
 * Exact k-NN by cluster pruning with the triangle inequality (Fukunaga and Narendra, "A Branch and
 * Bound Algorithm for Computing k-Nearest Neighbors", IEEE Trans. Computers, 1975, rules 1 and 2,
 * here in Hamming space with both sides of the inequality, as in LAESA: Micó, Oncina and Vidal 1994).
 *
 * <p>The codes are grouped around {@link #clusterCount} centres (bitwise majority of their members
 * on a sample, a few rounds: the code minimising the summed Hamming distance to a group), and copied
 * in cluster order, each cluster sorted by the distance {@code r(x)} of its codes to the centre. For
 * a query at distance {@code d(q,c)} from centre c, every member x has {@code d(q,x) >= |d(q,c) -
 * r(x)|}; so with the k-th best distance B so far, a cluster is skipped when {@code d(q,c) -
 * maxR(c) > B}, and inside a cluster only the run of codes with {@code r(x)} in {@code [d(q,c) - B,
 * d(q,c) + B]} (two look-ups in a table of first positions per radius) is scanned. Clusters are
 * visited nearest first, so B drops fast. Exactness needs only that {@code r(x)} is the true distance to the centre (it is recomputed
 * on load); how well the centres fit the data decides the speed alone.
 *
 * <p>A masked distance (the bits of some layers) is a pseudometric, so the same inequality holds
 * for it: a masked query sorts the clusters by its masked distances to the centres and tests each
 * code against the radii over the layers the mask touches (built on first use per set of layers,
 * 2 bytes per code, kept for up to 8 sets). Those radii are not sorted inside a cluster, so the
 * window is cut by the full radius from below ({@code d_M(c,x) <= r(x)}) and then either each code
 * in it is tested before it is compared, or, where most would pass (skewed codes), every code is
 * compared in one pass of the scan's loops ({@link #estimate} picks per cluster).
 *
 * <p>Codes from a network's activations sit on a low-dimensional set (the input space), so most
 * clusters lie far from a query and drop out; uniform random codes have no such structure and the
 * planner ({@link #estimate}) sends their queries elsewhere. Immutable, thread-safe.
 */
final class Partition {
  /** Smallest block worth partitioning. */
  static final int MIN_CODES = 4096;
  /**
   * Fewest codes per cluster on average (see {@link #clusterCount}): sqrt(n) clusters of sqrt(n)
   * codes from about 4M codes up. Measured on dense and skewed ReLU 256-bit codes (docs/benchmarks.md,
   * "Ten segments: larger clusters for small segments" and "Clusters of 2,048 codes"): ten segments
   * of 100k answered in-distribution 10-NN in about 0.65x the time with clusters of 1,000 codes than
   * of 316 (sqrt(n)); then, on one core of a nearly quiet machine, clusters of 2,048 codes answered
   * unmasked 10-NN over one 1M block of 256-bit codes in 0.74-0.87x the time of 1,024 (128 and 512
   * bits: 0.46-1.07x), ten segments of 100k in 0.80-1.05x, and masked queries about alike (the
   * largest move: dense 128-bit out of distribution from 0.71x to 0.84x of the masked scan). Clusters
   * of 4,096 were faster still for one block but slower over ten segments (dense out of distribution
   * 1.16x of 1,024's time).
   */
  static final int MIN_CLUSTER_SIZE = 2048;
  /**
   * Cap on the cluster count, and the fit: majority rounds on a sample of this many codes per
   * cluster. A better fit did not pay: on 1M skewed and dense ReLU 256-bit codes, in one block and in
   * ten of 100k, a sample of 32,768 codes, 8 rounds and k-means++ seeding (Arthur and Vassilvitskii,
   * SODA 2007) each changed the codes a 10-NN scans by about 1% in distribution, at most 4% out of it
   * (docs/benchmarks.md, "Ten segments of skewed codes, stop 19").
   */
  private static final int MAX_CLUSTERS = 4096, ROUNDS = 3, SAMPLE_PER_CLUSTER = 32;

  final int words;
  final long[] centres; // clusters * words
  final int[] start; // cluster c is positions start[c] .. start[c+1]-1
  final long[] codes; // copies of the codes, cluster by cluster, each by ascending radius
  final int[] ords; // position -> ordinal
  final char[] radius; // position -> distance to its centre
  final int[] maxRadius; // per cluster
  final int[] radiusBase, radiusStart; // cluster c's first position at radius >= r: radiusStart[radiusBase[c] + r] (see atRadius)
  private volatile int[] placeOf; // ordinal -> its cluster (high 16 bits) and its radius (low 16 bits): built by the first walk
  private final int maxOfMaxRadius;
  private final Radii stored; // radius and maxRadius: the radii over every bit
  private final long[][] segmentMasks; // per segment of the layout: its bits
  private final Map<List<Long>, Radii> coverRadii = new ConcurrentHashMap<>(); // per set of segments, built on first use

  /**
   * The partition of {@code block} with these centres and clusters; {@code copy} holds the codes in
   * cluster order ({@code block}'s codes at {@code ords}) or is null to gather them from the block.
   * Every radius is computed here from the copy.
   */
  Partition(CodeBlock block, long[] centres, int[] start, int[] ords, long[] copy) {
    this.words = block.wordsPerCode();
    this.segmentMasks = new long[block.layout().segments().size()][];
    for (int seg = 0; seg < segmentMasks.length; seg++) segmentMasks[seg] = block.layout().mask(seg);
    this.centres = centres;
    this.start = start;
    this.ords = ords;
    int n = ords.length, w = words, clusters = start.length - 1;
    if (copy != null && copy.length != (long) n * w) throw new IllegalArgumentException("copy of " + copy.length + " words for " + n + " codes");
    if (clusters > 1 << 16) throw new IllegalArgumentException(clusters + " clusters, more than " + (1 << 16)); // see placeOf
    long[] data = block.words();
    codes = copy != null ? copy : new long[Math.multiplyExact(n, w)];
    radius = new char[n];
    maxRadius = new int[clusters];
    int mm = 0;
    for (int c = 0; c < clusters; c++)
      for (int i = start[c]; i < start[c + 1]; i++) {
        if (copy == null) System.arraycopy(data, ords[i] * w, codes, i * w, w);
        int r = Hamming.distance(centres, c * w, codes, i * w, w);
        if (i > start[c] && r < radius[i - 1]) throw new IllegalArgumentException("cluster " + c + " not sorted by radius at position " + i);
        radius[i] = (char) r;
        maxRadius[c] = Math.max(maxRadius[c], r);
        mm = Math.max(mm, r);
      }
    maxOfMaxRadius = mm;
    stored = new Radii(radius, maxRadius);

    radiusBase = new int[clusters];
    int rows = 0;
    for (int c = 0; c < clusters; c++) {
      radiusBase[c] = rows;
      rows += maxRadius[c] + 1;
    }
    radiusStart = new int[rows];
    for (int c = 0, row = 0; c < clusters; c++)
      for (int r = 0, i = start[c]; r <= maxRadius[c]; r++, row++) {
        while (i < start[c + 1] && radius[i] < r) i++;
        radiusStart[row] = i;
      }
  }

  /**
   * The first position of cluster c whose code lies at least {@code r} from its centre (the
   * cluster's end if none): one look-up in a table built with the partition, where a binary search
   * over the radii waits on several dependent reads for each of the many clusters a query visits.
   */
  int atRadius(int c, int r) {
    if (r <= 0) return start[c];
    if (r > maxRadius[c]) return start[c + 1];
    return radiusStart[radiusBase[c] + r];
  }

  int clusters() {
    return start.length - 1;
  }

  long bytes() {
    return 8L * (codes.length + centres.length)
        + 4L * (start.length + ords.length + maxRadius.length + radiusBase.length + radiusStart.length)
        + 2L * radius.length;
  }

  /**
   * Bytes this partition adds on first use, at most, from its size alone (whether any of it is
   * built yet does not change it): the places of {@link #walk}, 4 bytes per code, built by the first
   * filtered query; and the radii of {@link #radii}, 2 bytes per code and 4 per cluster for each set
   * of segments a masked query touches other than all of them, at most {@value #MAX_COVERS} sets at
   * once (none for a one-segment layout; a mask of no bit at all, which the command line never
   * sends, is not counted).
   */
  long onDemandBytes() {
    int segments = segmentMasks.length;
    long covers = segments >= 4 ? MAX_COVERS : Math.min(MAX_COVERS, (1 << segments) - 2); // >= 4: no overflow
    return 4L * ords.length + covers * (2L * ords.length + 4L * clusters());
  }

  /** The partition of {@code block}, or null when it is too small (or its codes too wide for char radii). */
  static Partition build(CodeBlock block) {
    return build(block, MIN_CODES, MIN_CLUSTER_SIZE);
  }

  /**
   * The number of clusters for n codes: about sqrt(n) clusters of sqrt(n) codes (the balance of
   * centre work and window work: common practice) once sqrt(n) reaches
   * {@code minSize} (about 4M codes at the default), fewer and larger below, at most
   * {@value #MAX_CLUSTERS}, at least 1. A window is a run of one cluster's codes read from a
   * random place in memory: short runs wait on memory (about 1.5x the time per code in runs of 290
   * than of 880, docs/benchmarks.md), and every cluster costs a centre distance and a window look-up
   * per query, which for windows of a few hundred codes outweighs the tighter pruning.
   */
  static int clusterCount(int n, int minSize) {
    double size = Math.max(Math.sqrt(n), Math.max(1, minSize));
    return (int) Math.max(1, Math.min(MAX_CLUSTERS, Math.round(n / size)));
  }

  /**
   * The partition of {@code block} into {@link #clusterCount clusterCount(n, minClusterSize)}
   * clusters if it has at least {@code minCodes} codes (else null).
   */
  static Partition build(CodeBlock block, int minCodes, int minClusterSize) {
    int n = block.size(), w = block.wordsPerCode();
    if (n < Math.max(1, minCodes) || block.layout().bits() > Character.MAX_VALUE) return null;
    int clusters = clusterCount(n, minClusterSize);
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
        long cd = assigner.nearest(data, i * w);
        assign[i] = (int) cd;
        dist[i] = (int) (cd >>> 32);
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
    return new Partition(block, centres, start, ords, null);
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

    /** The nearest centre of the code at {@code data[off..]} (low 32 bits) and its distance (high 32 bits). */
    long nearest(long[] data, int off) {
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
      return (long) bestD << 32 | best;
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

  /** Members {@link #walk} tests before it judges whether its bounds pay, and the share kept above which they do not. */
  private static final int WALK_TRIAL = 1024;
  private static final double WALK_KEEPS = 0.75;

  /** Covers whose radii are kept at once (2 bytes per code each). */
  private static final int MAX_COVERS = 8;
  /**
   * One position in this many (at least) is read to estimate how many codes of a masked window pass
   * the radius test, and at most about {@link #MAX_SAMPLES} in all: the windows of an out-of-distribution
   * query hold a large share of the codes, and reading every 16th of them cost a tenth of a masked
   * scan of 100k codes.
   */
  private static final int SAMPLE_STRIDE = 16, MAX_SAMPLES = 2048;

  /** Distances of the positions to their centres over some bits, and each cluster's largest. */
  record Radii(char[] radius, int[] maxRadius) {}

  /**
   * Radii over the bits of the segments a mask touches (its cover): for a code x in cluster c and
   * the masked distance d_M, {@code d_M(c,x) <= r_cover(x) <= r(x)}, with the first an equality when
   * the mask covers its segments whole (a mask of whole layers, the usual one). The radii of a cover
   * are computed on first use (one pass over the codes) and kept, at most {@link #MAX_COVERS} covers
   * at once; a cover of every segment is the stored radii.
   */
  private Radii radii(long[] mask) {
    List<Long> cover = new ArrayList<>(words);
    long[] bits = new long[words];
    boolean all = true;
    for (long[] seg : segmentMasks) {
      boolean touched = false;
      for (int j = 0; j < words && !touched; j++) touched = (seg[j] & mask[j]) != 0;
      all &= touched;
      if (touched) for (int j = 0; j < words; j++) bits[j] |= seg[j];
    }
    if (all) return stored;
    for (long x : bits) cover.add(x);
    Radii r = coverRadii.get(cover);
    if (r != null) return r;
    if (coverRadii.size() >= MAX_COVERS) coverRadii.clear(); // bounds the memory; rebuilt on demand
    return coverRadii.computeIfAbsent(cover, c -> {
      char[] rad = new char[ords.length];
      int[] max = new int[clusters()];
      for (int cl = 0; cl < clusters(); cl++)
        for (int i = start[cl]; i < start[cl + 1]; i++) {
          rad[i] = (char) Hamming.maskedDistance(centres, cl * words, codes, i * words, bits, words);
          max[cl] = Math.max(max[cl], rad[i]);
        }
      return new Radii(rad, max);
    });
  }

  /** A mask, its cover's radii and whether they are its distances to the centres (see {@link Visit#exact}). */
  private record Cover(long[] mask, Radii radii, boolean exact) {}

  private volatile Cover lastCover; // the last masked query's: a run of queries over one layer skips the look-up

  private Cover cover(long[] mask) {
    Cover last = lastCover;
    if (last != null && Arrays.equals(last.mask, mask)) return last;
    Radii r = radii(mask);
    Cover c = new Cover(mask.clone(), r, r != stored && coversWhole(mask));
    lastCover = c;
    return c;
  }

  /**
   * Per-query state: the mask's selection and radii, the clusters in visiting order, their
   * distances and current windows.
   */
  static final class Visit {
    int[] order = new int[0], dq = new int[0], lo = new int[0], hi = new int[0];
    boolean[] whole = new boolean[0]; // a masked window read in one pass, without radius tests (see estimate)
    int[] byCluster = new int[0]; // the query's distance to each centre, by cluster
    int[] counts = new int[0];
    ScanKernel.Words sel;
    Radii radii; // the stored radii (no mask or one of every segment), else the mask's cover
    boolean exact; // radii are the masked distances to the centres (not only an upper bound)
    final int[] pass = new int[256]; // positions that passed the radius test, one block at a time
    final int[] members = new int[256]; // members of a filter that passed the radius test (see walk)

    void ensure(int clusters, int bits) {
      if (order.length < clusters) {
        order = new int[clusters];
        dq = new int[clusters];
        lo = new int[clusters];
        hi = new int[clusters];
        whole = new boolean[clusters];
        byCluster = new int[clusters];
      }
      if (counts.length < bits + 2) counts = new int[bits + 2];
    }
  }

  /**
   * First step of a query under an optional mask (null, or with ghost bits set as {@code
   * ScanSearcher.checkMask} leaves it), whose selection of the query's words is {@code sel}
   * ({@code ScanKernel.Words.of(q, mask, w)}): distances to every centre, clusters sorted nearest first (a
   * counting sort on the distance), then, when no cap is given, the nearest clusters scanned until
   * the top holds k codes (or all are seen). Returns the number of clusters fully scanned.
   */
  int begin(ScanKernel.Words sel, long[] mask, int bits, Visit v, IntPredicate accept, TopK top, int k, int maxDist) {
    int clusters = clusters(), w = words;
    v.ensure(clusters, bits);
    v.sel = sel;
    Cover cover = mask == null ? null : cover(mask);
    v.radii = cover == null ? stored : cover.radii;
    v.exact = cover == null || cover.exact;
    int[] counts = v.counts;
    Arrays.fill(counts, 0, bits + 2, 0);
    int[] d = v.byCluster;
    for (int c = 0; c < clusters; c++) {
      d[c] = v.sel.distance(centres, c * w, w, Integer.MAX_VALUE);
      counts[d[c] + 1]++;
    }
    for (int x = 0; x <= bits; x++) counts[x + 1] += counts[x];
    for (int c = 0; c < clusters; c++) {
      int p = counts[d[c]]++;
      v.order[p] = c;
      v.dq[p] = d[c];
    }
    int done = 0;
    // without a cap from elsewhere, the nearest clusters provide the first k-th distance; with one,
    // the windows under the cap do (a cap may leave fewer than k codes reachable in this block)
    while (maxDist == Integer.MAX_VALUE && done < clusters && top.size() < k) {
      int c = v.order[done];
      ScanKernel.knn(v.sel, codes, w, start[c], start[c + 1], ords, accept, top, maxDist);
      done++;
    }
    return done;
  }

  /** How many of the nearest clusters {@link #scanNearest} reads for {@code least} codes, after {@link #begin}. */
  int nearestClusters(Visit v, long least) {
    int done = 0;
    for (long read = 0; done < clusters() && read < least; done++) read += start[v.order[done] + 1] - start[v.order[done]];
    return done;
  }

  /** How many codes {@link #scanNearest} reads for {@code least}: the nearest clusters' sizes, after {@link #begin}. */
  long nearestCodes(Visit v, long least) {
    long read = 0;
    for (int p = 0, m = nearestClusters(v, least); p < m; p++) read += start[v.order[p] + 1] - start[v.order[p]];
    return read;
  }

  /**
   * After {@link #begin} with no clusters scanned, for a top that already holds k codes (the masked
   * scan's head; {@code accept} must refuse the codes the top was filled from): the nearest clusters
   * are scanned under its bound and {@code cap} until {@code least} codes have been read, so they
   * offer only codes that would enter (a fresh top of k = 100 filled from a cluster of about a
   * thousand codes took as long as the rest of the set-up), and the first k-th distance is that of
   * the head and those clusters. Returns the number of clusters scanned.
   */
  int scanNearest(Visit v, IntPredicate accept, TopK top, int cap, long least) {
    int done = 0, clusters = clusters();
    for (long read = 0; done < clusters && read < least; done++) {
      int c = v.order[done];
      ScanKernel.knn(v.sel, codes, words, start[c], start[c + 1], ords, accept, top, cap);
      read += start[c + 1] - start[c];
    }
    return done;
  }

  /** Whether the mask covers each segment it touches whole. */
  private boolean coversWhole(long[] mask) {
    for (long[] seg : segmentMasks) {
      boolean touched = false, whole = true;
      for (int j = 0; j < words; j++) {
        touched |= (seg[j] & mask[j]) != 0;
        whole &= (seg[j] & mask[j]) == seg[j];
      }
      if (touched && !whole) return false;
    }
    return true;
  }

  /**
   * Estimated cost, in the planner's units, of the rest of the query ({@link #finish}) given the
   * current k-th distance {@code bound}; also fixes each remaining cluster's window for it, and how
   * {@link #finish} reads it. A window of the stored radii is compared in full ({@code
   * partitionCode} each). A masked window is read one of two ways, whichever is estimated cheaper:
   * a radius test per code and a comparison of the share that passes it (that share estimated from
   * every {@value #SAMPLE_STRIDE}th code, a longer stride when the windows hold more than {@value
   * #MAX_SAMPLES} such samples), or every code compared in one pass of the scan's loops over the
   * mask's words (skewed codes: most of a window passes the test, and the pass costs less than the
   * tests, the gathering and the comparisons one by one). Stops as soon as the estimate exceeds
   * {@code limit} (the windows are then not all fixed, and the caller must not {@link #finish}).
   */
  double estimate(Visit v, int from, int bound, PlannerCosts cost, double limit) {
    bound = Math.min(bound, Character.MAX_VALUE); // no distance exceeds it: keeps dq + bound from overflowing
    boolean full = v.radii == stored;
    double perCode = cost.partitionCode(), perTest = cost.scanPerCode() + cost.scanPerWord();
    double perPass = perCode * cost.scan(1, v.sel.at().length) / cost.scan(1, 4); // a window code of 4 words costs perCode
    double least = Math.min(perTest, perPass), total = 0;
    long windowed = 0;
    for (int p = from; p < clusters() && total <= limit; p++) {
      int c = v.order[p], dq = v.dq[p];
      if (dq - v.radii.maxRadius[c] > bound) {
        v.lo[p] = v.hi[p] = 0;
        continue;
      }
      // d_M(c,x) <= r(x): codes with r(x) < dq - bound are out under any mask
      int lo = atRadius(c, dq - bound);
      int hi = full && v.exact ? atRadius(c, dq + bound + 1) : start[c + 1];
      v.lo[p] = lo;
      v.hi[p] = hi;
      windowed += hi - lo;
      total += (hi - lo) * (full ? perCode : least);
    }
    if (full) return total;
    char[] rad = v.radii.radius;
    int stride = (int) Math.max(SAMPLE_STRIDE, windowed / MAX_SAMPLES);
    for (int p = from; p < clusters() && total <= limit; p++) {
      int passed = 0, sampled = 0, dq = v.dq[p], lo = v.lo[p], hi = v.hi[p];
      for (int i = lo; i < hi; i += stride, sampled++) if (passes(rad[i], dq, bound, v.exact)) passed++;
      double tested = sampled == 0 ? 0 : (hi - lo) * (perTest + perCode * passed / sampled), whole = (hi - lo) * perPass;
      v.whole[p] = whole <= tested;
      total += Math.min(tested, whole) - (hi - lo) * least;
    }
    return total;
  }

  /** Whether a code at cover radius r from its centre can be within bound of a query dq from it. */
  private static boolean passes(int r, int dq, int bound, boolean exact) {
    return r >= dq - bound && (!exact || r <= dq + bound);
  }

  /**
   * The members of {@code set} (ordinals, ascending) offered to {@code top}, after {@link #begin}
   * with no mask: a member x of cluster c is compared only when {@code |d(q,c) - r(x)|}, a lower
   * bound of its distance, is within the k-th distance so far (capped by {@code maxDist}); its
   * place (cluster and radius) is read from a small table by ordinal, where its code would be a read
   * from a random place of a far larger array. The bounds of a block of members are taken before
   * any of them is compared, so a block sees the k-th distance the block before left (still exact:
   * the bound only drops). Where the bounds keep more than {@value #WALK_KEEPS} of the first
   * {@value #WALK_TRIAL} members (codes without structure, all about equally far from every centre),
   * the rest are compared without them, as the plain walk does. Returns the members compared.
   */
  long walk(ScanKernel.Words sel, long[] data, IdSet set, Visit v, TopK top, int maxDist) {
    int w = words;
    int[] dq = v.byCluster, block = v.pass, pass = v.members, placeOf = places();
    int bound = Math.min(maxDist, top.bound());
    long seen = 0, passed = 0, compared = 0;
    boolean skip = true;
    for (int from = 0, m = block.length; m == block.length && (m = set.next(from, block)) > 0; from = block[m - 1] + 1) {
      int kept = m;
      int[] list = block;
      if (skip) {
        kept = 0;
        list = pass;
        for (int j = 0; j < m; j++) {
          int ord = block[j], place = placeOf[ord];
          pass[kept] = ord;
          kept += Math.abs(dq[place >>> 16] - (place & 0xFFFF)) <= bound ? 1 : 0;
        }
        seen += m;
        passed += kept;
        skip = seen < WALK_TRIAL || passed <= WALK_KEEPS * seen;
      }
      compared += kept;
      for (int j = 0; j < kept; j++) {
        int ord = list[j], d = sel.distance(data, ord * w, w, bound);
        if (d <= bound) {
          top.offer(ord, d);
          bound = Math.min(maxDist, top.bound());
        }
      }
    }
    return compared;
  }

  /**
   * Each ordinal's cluster and radius (4 bytes per code), built on first use: only filtered queries
   * need it, and an open should not pay for it (counted by {@link #onDemandBytes}, built or not).
   * Threads racing here build equal tables.
   */
  private int[] places() {
    int[] p = placeOf;
    if (p != null) return p;
    p = new int[ords.length];
    for (int c = 0; c < clusters(); c++) for (int i = start[c]; i < start[c + 1]; i++) p[ords[i]] = c << 16 | radius[i];
    placeOf = p;
    return p;
  }

  /** Scans the remaining clusters' windows (narrowed as the k-th distance drops). */
  void finish(Visit v, int from, IntPredicate accept, TopK top, int maxDist) {
    int w = words;
    boolean full = v.radii == stored;
    char[] rad = v.radii.radius;
    for (int p = from; p < clusters(); p++) {
      int lo = v.lo[p], hi = v.hi[p];
      if (lo >= hi) continue;
      int c = v.order[p], dq = v.dq[p], bound = Math.min(Character.MAX_VALUE, Math.min(maxDist, top.bound()));
      if (dq - maxOfMaxRadius > bound) break; // no later cluster can hold a code within the bound
      if (dq - v.radii.maxRadius[c] > bound) continue;
      lo = Math.max(lo, atRadius(c, dq - bound));
      if (lo >= hi) continue;
      if (full || v.whole[p]) {
        if (full && v.exact) hi = Math.min(hi, atRadius(c, dq + bound + 1));
        ScanKernel.knn(v.sel, codes, w, lo, hi, ords, accept, top, maxDist);
        continue;
      }
      // radius tests without branches, a block at a time: the positions that pass are gathered,
      // then compared; the block after sees the bound they left
      int[] pass = v.pass;
      for (int i = lo; i < hi; ) {
        int end = Math.min(hi, i + pass.length), m = 0, least = dq - bound, span = v.exact ? 2 * bound : Integer.MAX_VALUE;
        for (; i < end; i++) {
          pass[m] = i;
          m += Integer.compareUnsigned(rad[i] - least, span) <= 0 ? 1 : 0;
        }
        // a code tied with the k-th distance enters only with a smaller ordinal than the k-th's:
        // the others (thousands over one layer of skewed codes) are not offered, nor is the filter asked
        for (int j = 0; j < m; j++) {
          int at = pass[j], d = v.sel.distance(codes, at * w, w, bound);
          if (d > bound || ((long) d << 32 | ords[at]) >= top.worst() || accept != null && !accept.test(ords[at])) continue;
          top.offer(ords[at], d);
          bound = Math.min(bound, top.bound());
        }
      }
    }
  }
}
