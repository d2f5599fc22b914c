package io.actindex.query.stats;

import io.actindex.core.BadParameterException;
import java.util.Arrays;

/**
 * The Gaussian kernel {@code k(x, y) = exp(-|x - y|^2 / (2 sigma^2))} on float rows, as a
 * {@link KernelMatrix} over a pooled sample; {@code sigma} by the median heuristic (the median of
 * the pooled pairwise Euclidean distances, NumPy's {@code np.median} rule; Gretton et al., JMLR
 * 2012, sec. 8) unless given. A median of 0 (mostly identical rows) gives {@code sigma = 1}.
 */
public final class GaussianMmd {
  private GaussianMmd() {}

  public record Kernel(KernelMatrix matrix, double sigma) {}

  public static Kernel of(FloatSample pooled, Double sigma, int threads) {
    int n = pooled.rows(), d = pooled.cols();
    if ((long) n * n > Integer.MAX_VALUE - 16) throw new BadParameterException("pooled", " has " + n + " rows, too many for one kernel matrix");
    double[] v = pooled.values(), sq = new double[n * n];
    Parallel.forRange(threads, n, (from, to) -> {
      for (int i = from; i < to; i++)
        for (int j = i + 1; j < n; j++) {
          double s = 0;
          for (int c = 0; c < d; c++) {
            double t = v[i * d + c] - v[j * d + c];
            s += t * t;
          }
          sq[i * n + j] = s;
          sq[j * n + i] = s;
        }
    });
    double sig = sigma != null ? sigma : medianDistance(sq, n);
    if (sig <= 0) sig = 1;
    double[] k = new double[n * n];
    double scale = -1 / (2 * sig * sig);
    for (int i = 0; i < k.length; i++) k[i] = Math.exp(sq[i] * scale);
    return new Kernel(new KernelMatrix(n, k), sig);
  }

  private static double medianDistance(double[] sq, int n) {
    double[] upper = new double[n * (n - 1) / 2];
    int p = 0;
    for (int i = 0; i < n; i++) for (int j = i + 1; j < n; j++) upper[p++] = sq[i * n + j];
    Arrays.sort(upper);
    int len = upper.length;
    double med = len % 2 == 1 ? Math.sqrt(upper[len / 2]) : (Math.sqrt(upper[len / 2 - 1]) + Math.sqrt(upper[len / 2])) / 2;
    return med;
  }
}
