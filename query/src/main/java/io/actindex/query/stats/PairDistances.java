package io.actindex.query.stats;

import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import java.util.function.DoubleUnaryOperator;

/**
 * Every Hamming distance between the rows of a pooled sample (A's {@code m} rows, then B's),
 * computed once with popcounts, kept as a matrix, and counted in histograms per group of pairs
 * (inside A, inside B, across) for the whole code and for each layer. Kernels that depend on the
 * distance alone take their MMD^2 from the histograms and their kernel matrix from the stored
 * distances.
 */
public final class PairDistances {
  /** Pair groups of the histograms. */
  public static final int AA = 0, BB = 1, AB = 2;

  private final int n, m;
  private final char[] dist;
  private final long[][][] hist; // [view][group][distance]; view 0 = whole code, 1 + s = layer s
  private final int[] viewBits;

  /** {@code pooled}: A (rows {@code 0..m-1}) then B; at most 65,535 bits and 46,340 rows. */
  public PairDistances(CodeBlock pooled, int m, int threads) {
    CodeLayout layout = pooled.layout();
    if (layout.bits() > Character.MAX_VALUE) throw new BadParameterException("pooled", " holds codes of " + layout.bits() + " bits; distances are kept in 16 bits (at most 65,535)");
    this.n = pooled.size();
    if ((long) n * n > Integer.MAX_VALUE - 16) throw new BadParameterException("pooled", " has " + n + " rows, too many for one distance matrix");
    this.m = m;
    int layers = layout.segments().size();
    int views = layers == 1 ? 1 : layers + 1;
    viewBits = new int[views];
    viewBits[0] = layout.bits();
    for (int s = 0; s < layers && views > 1; s++) viewBits[1 + s] = layout.segments().get(s).bits();
    hist = new long[views][3][];
    for (int v = 0; v < views; v++) for (int g = 0; g < 3; g++) hist[v][g] = new long[viewBits[v] + 1];
    dist = new char[n * n];
    int w = pooled.wordsPerCode();
    long[] data = pooled.words();
    // per layer: the words it touches and its masks there
    int[] lo = new int[layers], hi = new int[layers];
    long[][] masks = new long[layers][];
    for (int s = 0; s < layers; s++) {
      masks[s] = layout.mask(s);
      lo[s] = layout.start(s) >>> 6;
      hi[s] = (layout.start(s) + layout.segments().get(s).bits() - 1) >>> 6;
    }
    Object lock = new Object();
    Parallel.forRange(threads, n, (from, to) -> {
      long[][][] local = new long[views][3][];
      for (int v = 0; v < views; v++) for (int g = 0; g < 3; g++) local[v][g] = new long[viewBits[v] + 1];
      int[] per = new int[layers];
      for (int i = from; i < to; i++) {
        int oi = i * w;
        for (int j = i + 1; j < n; j++) {
          int oj = j * w, d = 0;
          if (views == 1) {
            for (int q = 0; q < w; q++) d += Long.bitCount(data[oi + q] ^ data[oj + q]);
          } else {
            for (int s = 0; s < layers; s++) {
              int ds = 0;
              for (int q = lo[s]; q <= hi[s]; q++) ds += Long.bitCount((data[oi + q] ^ data[oj + q]) & masks[s][q]);
              per[s] = ds;
              d += ds;
            }
          }
          dist[i * n + j] = (char) d;
          dist[j * n + i] = (char) d;
          int g = j < m ? AA : i >= m ? BB : AB;
          local[0][g][d]++;
          if (views > 1) for (int s = 0; s < layers; s++) local[1 + s][g][per[s]]++;
        }
      }
      synchronized (lock) {
        for (int v = 0; v < views; v++)
          for (int g = 0; g < 3; g++)
            for (int d = 0; d < local[v][g].length; d++) hist[v][g][d] += local[v][g][d];
      }
    });
  }

  public int size() {
    return n;
  }

  public int distance(int i, int j) {
    return dist[i * n + j];
  }

  /** Views: 0 = whole code, {@code 1 + s} = layer s (only when the layout has several layers). */
  public int views() {
    return hist.length;
  }

  public long[] histogram(int view, int group) {
    return hist[view][group].clone();
  }

  /**
   * The median of the pooled pairwise distances (every unordered pair of the {@code n} rows),
   * with NumPy's {@code np.median} rule: the mean of the two middle values for an even count.
   */
  public double median(int view) {
    long[][] h = hist[view];
    long total = 0;
    for (int g = 0; g < 3; g++) for (long c : h[g]) total += c;
    if (total == 0) return 0;
    long lower = (total - 1) / 2, upper = total / 2; // 0-based ranks of the middle value(s)
    return (valueAtRank(h, lower) + valueAtRank(h, upper)) / 2.0;
  }

  private static int valueAtRank(long[][] h, long rank) {
    long seen = 0;
    for (int d = 0; d < h[0].length; d++) {
      seen += h[AA][d] + h[BB][d] + h[AB][d];
      if (seen > rank) return d;
    }
    throw new IllegalStateException("rank beyond the histogram");
  }

  /** MMD^2_u (Gretton et al. 2012, eq. (3)) for a kernel of the distance, from the histograms. */
  public double mmd2(int view, DoubleUnaryOperator kernelOfDistance) {
    long[][] h = hist[view];
    double sAA = 0, sBB = 0, sAB = 0;
    for (int d = 0; d < h[0].length; d++) {
      if (h[AA][d] == 0 && h[BB][d] == 0 && h[AB][d] == 0) continue;
      double k = kernelOfDistance.applyAsDouble(d);
      sAA += h[AA][d] * k;
      sBB += h[BB][d] * k;
      sAB += h[AB][d] * k;
    }
    double a = m, b = n - m;
    return 2 * sAA / (a * (a - 1)) + 2 * sBB / (b * (b - 1)) - 2 * sAB / (a * b);
  }

  /** The kernel matrix of the whole code for a kernel of the distance (the distances and a table of values). */
  public KernelMatrix kernel(DoubleUnaryOperator kernelOfDistance) {
    double[] table = new double[viewBits[0] + 1];
    for (int d = 0; d < table.length; d++) table[d] = kernelOfDistance.applyAsDouble(d);
    return new KernelMatrix(n, dist, table);
  }
}
