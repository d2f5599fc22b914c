package io.actindex.core;

import java.util.SplittableRandom;

/**
 * Generated data for tests and benchmarks: uniform random codes, and ReLU-like codes with their
 * float activations from a random two-hidden-layer ReLU network applied to a Gaussian mixture.
 *
 * <p>The network is deliberately skewed like trained ones: some neurons are dead (large negative
 * bias), some always on (large positive bias), and some copy others (correlated units).
 */
public final class SyntheticCodes {
  private SyntheticCodes() {}

  /** Uniform random codes of {@code bits} bits. */
  public static CodeBlock uniform(int n, int bits, long seed) {
    CodeLayout layout = CodeLayout.single("bits", bits);
    SplittableRandom rnd = new SplittableRandom(seed);
    int w = layout.words();
    long[] words = new long[n * w];
    long ghost = CodeBlock.ghostMask(layout);
    for (int i = 0; i < n; i++) {
      for (int j = 0; j < w; j++) words[i * w + j] = rnd.nextLong();
      words[i * w + w - 1] &= ~ghost;
    }
    return new CodeBlock(layout, n, words);
  }

  /**
   * {@code n} codes in the layout of {@code codes} whose bits under {@code mask} are copied from
   * only {@code distinct} of its codes (picked at random per code) and the rest from the code at
   * the same position: under that mask thousands of codes tie exactly, as one layer of a skewed
   * network's codes does (dead, always-on and copied units).
   */
  public static CodeBlock tiedUnder(CodeBlock codes, long[] mask, int distinct, long seed) {
    SplittableRandom rnd = new SplittableRandom(seed);
    int n = codes.size(), w = codes.wordsPerCode();
    long[] words = codes.words().clone();
    for (int i = 0; i < n; i++) {
      int from = rnd.nextInt(Math.min(distinct, n));
      for (int j = 0; j < w; j++) words[i * w + j] = (words[i * w + j] & ~mask[j]) | (codes.words()[from * w + j] & mask[j]);
    }
    return new CodeBlock(codes.layout(), n, words);
  }

  /** Codes with independent bits, bit b on with probability {@code rates[b]} (two-sample tests). */
  public static CodeBlock bernoulli(SplittableRandom rnd, int n, double[] rates) {
    CodeLayout layout = CodeLayout.single("bits", rates.length);
    int w = layout.words();
    long[] words = new long[n * w];
    for (int i = 0; i < n; i++)
      for (int b = 0; b < rates.length; b++)
        if (rnd.nextDouble() < rates[b]) words[i * w + (b >>> 6)] |= 1L << (b & 63);
    return new CodeBlock(layout, n, words);
  }

  /** A sample: n inputs passed through the network; activations row-major, hidden1 then hidden2. */
  public record Sample(CodeBlock codes, float[] activations, int[] cluster) {
    public int dims() {
      return codes.layout().bits();
    }
  }

  /** A random ReLU network with two hidden layers over a Gaussian mixture of {@code clusters}. */
  public static final class ReluNet {
    private final int inputDim, h1, h2, clusters;
    private final double[][] centers;
    private final double[][] w1, w2;
    private final double[] b1, b2;

    /** The skewed network: dead, always-on and copied units, like many trained networks. */
    public ReluNet(int inputDim, int h1, int h2, int clusters, long seed) {
      this(inputDim, h1, h2, clusters, seed, true);
    }

    /**
     * A network whose units are mostly alive ({@code skewed == false}): zero-centred biases, no
     * copied units, so no bit is constant over a large sample and every bit fires on a fair share
     * of the inputs. With {@code skewed} true: the constructor above.
     */
    public static ReluNet dense(int inputDim, int h1, int h2, int clusters, long seed) {
      return new ReluNet(inputDim, h1, h2, clusters, seed, false);
    }

    /**
     * Spread of the dense network's cluster centres (within-cluster noise has unit variance): 2.2
     * gives a median in-distribution 1-NN distance of 21 bits among 1M 256-bit codes (measured).
     */
    private static final double DENSE_SPREAD = 2.2;

    private ReluNet(int inputDim, int h1, int h2, int clusters, long seed, boolean skewed) {
      this.inputDim = inputDim;
      this.h1 = h1;
      this.h2 = h2;
      this.clusters = clusters;
      SplittableRandom rnd = new SplittableRandom(seed);
      centers = new double[clusters][inputDim];
      double spread = skewed ? 3 : DENSE_SPREAD;
      for (double[] c : centers) for (int j = 0; j < inputDim; j++) c[j] = spread * gauss(rnd);
      w1 = weights(rnd, h1, inputDim);
      w2 = weights(rnd, h2, h1);
      if (skewed) {
        b1 = biases(rnd, h1, Math.sqrt(inputDim) * 3);
        b2 = biases(rnd, h2, Math.sqrt(h1) * 2);
        // correlated units: every 8th neuron copies its neighbour with a small change
        for (int i = 7; i < h1; i += 8) for (int j = 0; j < inputDim; j++) w1[i][j] = w1[i - 1][j] * 1.05;
      } else {
        b1 = new double[h1];
        b2 = new double[h2];
        for (int i = 0; i < h1; i++) b1[i] = 0.3 * gauss(rnd);
        // the second layer sees non-negative inputs: centre each unit on its mean input so it fires
        // about half the time instead of almost never or always
        double meanA1 = Math.sqrt(spread * spread + 1) * 0.4; // E[relu(N(0, s^2))] ~ 0.4 s: inputs have variance spread^2 + 1
        for (int i = 0; i < h2; i++) {
          double s = 0;
          for (double x : w2[i]) s += x;
          b2[i] = -s * meanA1 + 0.3 * gauss(rnd);
        }
      }
    }

    private static double[][] weights(SplittableRandom rnd, int out, int in) {
      double[][] w = new double[out][in];
      double scale = 1.0 / Math.sqrt(in);
      for (double[] row : w) for (int j = 0; j < in; j++) row[j] = gauss(rnd) * scale;
      return w;
    }

    /** Mostly small biases; ~6% strongly negative (dead), ~6% strongly positive (always on). */
    private static double[] biases(SplittableRandom rnd, int out, double big) {
      double[] b = new double[out];
      for (int i = 0; i < out; i++) {
        double u = rnd.nextDouble();
        b[i] = u < 0.06 ? -big * 4 : u < 0.12 ? big * 4 : 0.3 * gauss(rnd);
      }
      return b;
    }

    public CodeLayout layout() {
      return new CodeLayout(java.util.List.of(new CodeLayout.Segment("h1", h1), new CodeLayout.Segment("h2", h2)));
    }

    /**
     * {@code n} inputs drawn from the mixture; {@code shift} moves every cluster centre by that many
     * standard deviations along a random direction (0 = in distribution).
     */
    public Sample sample(int n, double shift, long seed) {
      SplittableRandom rnd = new SplittableRandom(seed);
      double[] dir = new double[inputDim];
      double norm = 0;
      for (int j = 0; j < inputDim; j++) norm += (dir[j] = gauss(rnd)) * dir[j];
      norm = Math.sqrt(norm);
      CodeLayout layout = layout();
      int w = layout.words(), bits = h1 + h2;
      long[] words = new long[n * w];
      float[] acts = new float[n * bits];
      int[] cluster = new int[n];
      double[] x = new double[inputDim], a1 = new double[h1];
      for (int i = 0; i < n; i++) {
        int c = rnd.nextInt(clusters);
        cluster[i] = c;
        for (int j = 0; j < inputDim; j++) x[j] = centers[c][j] + gauss(rnd) + shift * dir[j] / norm * 3;
        for (int u = 0; u < h1; u++) {
          double s = b1[u];
          for (int j = 0; j < inputDim; j++) s += w1[u][j] * x[j];
          a1[u] = Math.max(0, s);
          acts[i * bits + u] = (float) a1[u];
          if (a1[u] > 0) words[i * w + (u >>> 6)] |= 1L << (u & 63);
        }
        for (int u = 0; u < h2; u++) {
          double s = b2[u];
          for (int j = 0; j < h1; j++) s += w2[u][j] * a1[j];
          double a = Math.max(0, s);
          int bit = h1 + u;
          acts[i * bits + bit] = (float) a;
          if (a > 0) words[i * w + (bit >>> 6)] |= 1L << (bit & 63);
        }
      }
      return new Sample(new CodeBlock(layout, n, words), acts, cluster);
    }
  }

  private static double gauss(SplittableRandom rnd) {
    double u = 1 - rnd.nextDouble(), v = rnd.nextDouble();
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
  }

  /** ReLU-like codes of {@code h1 + h2} bits from a fresh network. */
  public static Sample reluLike(int n, int h1, int h2, long seed) {
    return new ReluNet(32, h1, h2, 12, seed).sample(n, 0, seed ^ 0x5DEECE66DL);
  }
}
