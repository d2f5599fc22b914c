package io.actindex.query;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;

/** One hidden ReLU layer with weights given by hand, on 2-D inputs: unit u is on when w[u]·x + b[u] > 0. */
record HandNet(double[][] w, double[] b) {

  /** Lines x = 0, y = 0, x + y = 1: in general position (no two parallel, no three through one point). */
  static HandNet threeLines() {
    return new HandNet(new double[][] {{1, 0}, {0, 1}, {1, 1}}, new double[] {0, 0, -1});
  }

  CodeLayout layout() {
    return CodeLayout.single("hidden", b.length);
  }

  boolean[] code(double x, double y) {
    boolean[] c = new boolean[b.length];
    for (int u = 0; u < b.length; u++) c[u] = w[u][0] * x + w[u][1] * y + b[u] > 0;
    return c;
  }

  /** The ReLU activations max(0, w·x + b). */
  float[] activations(double x, double y) {
    float[] a = new float[b.length];
    for (int u = 0; u < b.length; u++) a[u] = (float) Math.max(0, w[u][0] * x + w[u][1] * y + b[u]);
    return a;
  }

  /** Codes of a {@code steps x steps} grid over {@code [lo, hi]^2}, shifted off the lines by a small irrational offset. */
  CodeBlock grid(double lo, double hi, int steps) {
    boolean[][] rows = new boolean[steps * steps][];
    double step = (hi - lo) / (steps - 1), eps = Math.sqrt(2) * 1e-3;
    for (int i = 0; i < steps; i++)
      for (int j = 0; j < steps; j++) rows[i * steps + j] = code(lo + i * step + eps, lo + j * step + eps * Math.E);
    return CodeBlock.fromBits(layout(), rows);
  }
}
