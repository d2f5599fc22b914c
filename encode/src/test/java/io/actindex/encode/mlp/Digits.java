package io.actindex.encode.mlp;

import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;

/**
 * The UCI "Optical Recognition of Handwritten Digits" set (Alpaydin &amp; Kaynak, 1998; CC BY 4.0),
 * the 1,797-sample copy scikit-learn ships (test resources {@code digits/}, see SOURCE.md), pixels
 * scaled to [0, 1], shuffled with a fixed seed and split 75/25: rows {@code 0..nTrain-1} train,
 * the rest test ({@link DigitsData} is the same rows in file order). {@link #train()} is the MLP (64-64-32-10, ReLU) every digits test uses.
 */
public final class Digits {
  public final double[][] x;
  public final int[] y;
  public final int nTrain;

  private Digits(double[][] x, int[] y) {
    this.x = x;
    this.y = y;
    this.nTrain = x.length * 3 / 4;
  }

  public static Digits load() {
    DigitsData raw = DigitsData.load();
    List<double[]> rows = List.of(raw.x());
    int[] labels = raw.y();
    int n = rows.size();
    int[] order = new int[n];
    for (int i = 0; i < n; i++) order[i] = i;
    SplittableRandom rnd = new SplittableRandom(2026);
    for (int i = n - 1; i > 0; i--) {
      int j = rnd.nextInt(i + 1), t = order[i];
      order[i] = order[j];
      order[j] = t;
    }
    double[][] x = new double[n][];
    int[] y = new int[n];
    for (int i = 0; i < n; i++) {
      x[i] = rows.get(order[i]);
      y[i] = labels[order[i]];
    }
    return new Digits(x, y);
  }

  /** The trainer's MLP with hidden layers of 64 and 32 ReLU units on the training rows (seeded). */
  public Mlp train() {
    return MlpTrainer.train(Arrays.copyOf(x, nTrain), Arrays.copyOf(y, nTrain), 10,
        new MlpTrainer.Config(new int[] {64, 32}, 60, 32, 1e-3, 7));
  }
}
