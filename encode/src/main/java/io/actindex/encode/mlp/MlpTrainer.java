package io.actindex.encode.mlp;

import io.actindex.core.BadParameterException;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.CommonOps_DDRM;

/**
 * Trains a small ReLU {@link Mlp} classifier: softmax cross-entropy, mini-batches, Adam (Kingma &
 * Ba, "Adam: A Method for Stochastic Optimization", 2015, Algorithm 1), He-normal initialisation
 * (He et al. 2015) and zero biases. Deterministic: one thread, all randomness from {@code seed}
 * (initial weights and the per-epoch shuffle). Layers are named as PyTorch's {@code
 * nn.Sequential(Linear, ReLU, Linear, ...)} names them: {@code "0"}, {@code "2"}, {@code "4"}, ...
 * The returned weights are rounded to float32, so a model saved as F32 safetensors and loaded
 * again computes exactly what the returned one computes.
 */
public final class MlpTrainer {
  private MlpTrainer() {}

  /**
   * @param hidden widths of the hidden layers
   * @param epochs passes over the data
   * @param batchSize rows per Adam step
   * @param learningRate Adam step size (1e-3 is common practice)
   * @param seed for initial weights and shuffles
   */
  public record Config(int[] hidden, int epochs, int batchSize, double learningRate, long seed) {
    public Config {
      hidden = hidden.clone();
      for (int h : hidden) if (h <= 0) throw new BadParameterException("hidden", " widths must be at least 1, got " + h);
      if (epochs < 0) throw new BadParameterException("epochs", " must be at least 0, got " + epochs);
      if (batchSize < 1) throw new BadParameterException("batchSize", " must be at least 1, got " + batchSize);
      if (!(learningRate > 0 && Double.isFinite(learningRate)))
        throw new BadParameterException("learningRate", " must be a positive number, got " + learningRate);
    }
  }

  /** Trains on rows {@code x} ({@code n x d}) with labels {@code y} in {@code [0, classes)}. */
  public static Mlp train(double[][] x, int[] y, int classes, Config cfg) {
    int n = x.length, d = x[0].length;
    if (y.length != n) throw new BadParameterException("y", " has " + y.length + " labels for the " + n + " rows of `x`");
    for (int label : y) if (label < 0 || label >= classes) throw new BadParameterException("y", " holds label " + label + ", outside 0.." + (classes - 1));
    SplittableRandom rnd = new SplittableRandom(cfg.seed());
    int[] widths = new int[cfg.hidden().length + 2];
    widths[0] = d;
    System.arraycopy(cfg.hidden(), 0, widths, 1, cfg.hidden().length);
    widths[widths.length - 1] = classes;
    int layers = widths.length - 1;
    DMatrixRMaj[] w = new DMatrixRMaj[layers];
    double[][] b = new double[layers][];
    for (int l = 0; l < layers; l++) {
      w[l] = new DMatrixRMaj(widths[l + 1], widths[l]);
      double sd = Math.sqrt(2.0 / widths[l]);
      for (int i = 0; i < w[l].data.length; i++) w[l].data[i] = gaussian(rnd) * sd;
      b[l] = new double[widths[l + 1]];
    }
    Adam[] aw = new Adam[layers], ab = new Adam[layers];
    for (int l = 0; l < layers; l++) {
      aw[l] = new Adam(w[l].data.length);
      ab[l] = new Adam(b[l].length);
    }
    int[] order = new int[n];
    for (int i = 0; i < n; i++) order[i] = i;
    int step = 0;
    for (int epoch = 0; epoch < cfg.epochs(); epoch++) {
      for (int i = n - 1; i > 0; i--) {
        int j = rnd.nextInt(i + 1);
        int t = order[i];
        order[i] = order[j];
        order[j] = t;
      }
      for (int start = 0; start < n; start += cfg.batchSize()) {
        int m = Math.min(cfg.batchSize(), n - start);
        DMatrixRMaj xb = new DMatrixRMaj(m, d);
        int[] yb = new int[m];
        for (int r = 0; r < m; r++) {
          System.arraycopy(x[order[start + r]], 0, xb.data, r * d, d);
          yb[r] = y[order[start + r]];
        }
        // forward, keeping every layer's output
        DMatrixRMaj[] a = new DMatrixRMaj[layers + 1];
        a[0] = xb;
        for (int l = 0; l < layers; l++) {
          a[l + 1] = new DMatrixRMaj(m, widths[l + 1]);
          CommonOps_DDRM.multTransB(a[l], w[l], a[l + 1]);
          double[] z = a[l + 1].data;
          int o = widths[l + 1];
          for (int k = 0; k < z.length; k++) {
            double v = z[k] + b[l][k % o];
            z[k] = l < layers - 1 && v <= 0 ? 0 : v;
          }
        }
        // softmax cross-entropy gradient w.r.t. logits: (p - onehot) / m
        DMatrixRMaj g = a[layers].copy();
        for (int r = 0; r < m; r++) {
          double max = Double.NEGATIVE_INFINITY, sum = 0;
          for (int c = 0; c < classes; c++) max = Math.max(max, g.data[r * classes + c]);
          for (int c = 0; c < classes; c++) sum += g.data[r * classes + c] = Math.exp(g.data[r * classes + c] - max);
          for (int c = 0; c < classes; c++) g.data[r * classes + c] = (g.data[r * classes + c] / sum - (c == yb[r] ? 1 : 0)) / m;
        }
        step++;
        for (int l = layers - 1; l >= 0; l--) {
          DMatrixRMaj gw = new DMatrixRMaj(widths[l + 1], widths[l]);
          CommonOps_DDRM.multTransA(g, a[l], gw);
          double[] gb = new double[widths[l + 1]];
          for (int k = 0; k < g.data.length; k++) gb[k % widths[l + 1]] += g.data[k];
          DMatrixRMaj gPrev = null;
          if (l > 0) {
            gPrev = new DMatrixRMaj(m, widths[l]);
            CommonOps_DDRM.mult(g, w[l], gPrev);
            double[] act = a[l].data;
            for (int k = 0; k < act.length; k++) if (act[k] <= 0) gPrev.data[k] = 0;
          }
          aw[l].step(w[l].data, gw.data, cfg.learningRate(), step);
          ab[l].step(b[l], gb, cfg.learningRate(), step);
          g = gPrev;
        }
      }
    }
    List<Mlp.Layer> out = new ArrayList<>();
    for (int l = 0; l < layers; l++) {
      for (int i = 0; i < w[l].data.length; i++) w[l].data[i] = (float) w[l].data[i];
      for (int i = 0; i < b[l].length; i++) b[l][i] = (float) b[l][i];
      out.add(new Mlp.Layer(Integer.toString(2 * l), w[l], b[l]));
    }
    return new Mlp(out);
  }

  /** Standard normal by the Box-Muller transform (deterministic given the generator). */
  private static double gaussian(SplittableRandom rnd) {
    double u1 = 1.0 - rnd.nextDouble(), u2 = rnd.nextDouble();
    return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
  }

  /** Adam state of one parameter array (beta1 0.9, beta2 0.999, epsilon 1e-8, as in the paper). */
  private static final class Adam {
    private final double[] m, v;

    Adam(int n) {
      m = new double[n];
      v = new double[n];
    }

    void step(double[] p, double[] g, double lr, int t) {
      double c1 = 1 - Math.pow(0.9, t), c2 = 1 - Math.pow(0.999, t);
      for (int i = 0; i < p.length; i++) {
        m[i] = 0.9 * m[i] + 0.1 * g[i];
        v[i] = 0.999 * v[i] + 0.001 * g[i] * g[i];
        p[i] -= lr * (m[i] / c1) / (Math.sqrt(v[i] / c2) + 1e-8);
      }
    }
  }
}
