package io.actindex.encode;

import io.actindex.core.BadInputException;
import java.io.IOException;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.Map;

/**
 * Exact per-neuron medians of a layer source, as NumPy's {@code np.median} defines them on float64
 * values: the middle value, or the mean of the two middle values when the row count is even.
 * Holds every value in memory (as floats when they are exact as floats), so it refuses inputs with
 * more than {@link #MAX_VALUES} values; compute medians on a sample and pass them in {@link
 * EncodeOptions#medians()} for larger builds.
 */
final class Medians {
  static final long MAX_VALUES = 64L << 20;

  private Medians() {}

  static Map<String, double[]> compute(LayerSource src) throws IOException {
    int layers = src.names().size();
    int[] widths = src.widths();
    long total = 0;
    for (int w : widths) total += w;
    if (src.rows() >= 0 && src.rows() * total > MAX_VALUES) throw tooMany(src, src.rows() * total);
    int chunk = (int) Math.max(1, Math.min(4096, (1 << 20) / total));
    float[][] f = new float[layers][];
    double[][] d = new double[layers][];
    float[][][] fc = new float[layers][][];
    double[][][] dc = new double[layers][][];
    int cap = 1024;
    for (int i = 0; i < layers; i++) {
      if (src.floats(i)) {
        f[i] = new float[chunk * widths[i]];
        fc[i] = new float[widths[i]][cap];
      } else {
        d[i] = new double[chunk * widths[i]];
        dc[i] = new double[widths[i]][cap];
      }
    }
    int n = 0;
    int m;
    while ((m = src.read(chunk, f, d)) > 0) {
      if ((long) (n + m) * total > MAX_VALUES) throw tooMany(src, (long) (n + m) * total);
      if (n + m > cap) {
        cap = Math.max(n + m, cap * 2);
        for (int i = 0; i < layers; i++)
          for (int c = 0; c < widths[i]; c++) {
            if (fc[i] != null) fc[i][c] = Arrays.copyOf(fc[i][c], cap);
            else dc[i][c] = Arrays.copyOf(dc[i][c], cap);
          }
      }
      for (int i = 0; i < layers; i++) {
        int w = widths[i];
        for (int r = 0; r < m; r++)
          for (int c = 0; c < w; c++) {
            if (fc[i] != null) fc[i][c][n + r] = f[i][r * w + c];
            else dc[i][c][n + r] = d[i][r * w + c];
          }
      }
      n += m;
    }
    if (n == 0) throw new BadInputException(src.source() + ": no rows to compute per-neuron medians from");
    Map<String, double[]> out = new LinkedHashMap<>();
    for (int i = 0; i < layers; i++) {
      double[] med = new double[widths[i]];
      for (int c = 0; c < widths[i]; c++) {
        if (fc[i] != null) {
          float[] v = Arrays.copyOf(fc[i][c], n);
          Arrays.sort(v);
          med[c] = n % 2 == 1 ? v[n / 2] : ((double) v[n / 2 - 1] + v[n / 2]) / 2;
        } else {
          double[] v = Arrays.copyOf(dc[i][c], n);
          Arrays.sort(v);
          med[c] = n % 2 == 1 ? v[n / 2] : (v[n / 2 - 1] + v[n / 2]) / 2;
        }
      }
      out.put(src.names().get(i), med);
    }
    return out;
  }

  private static BadInputException tooMany(LayerSource src, long values) {
    return new BadInputException(src.source() + ": per-neuron medians need every value in memory; this input has " + values
        + " values, more than " + MAX_VALUES + ". Compute medians on a sample and pass them as options");
  }
}
