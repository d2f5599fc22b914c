package io.actindex.encode.mlp;

import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStreamReader;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import java.util.zip.GZIPInputStream;

/**
 * The UCI "Optical Recognition of Handwritten Digits" set (Alpaydin &amp; Kaynak, 1998; CC BY 4.0),
 * the 1,797-sample copy scikit-learn ships (test resources {@code digits/}, see SOURCE.md), pixels
 * scaled to [0, 1], shuffled with a fixed seed and split 75/25: rows {@code 0..nTrain-1} train,
 * the rest test. {@link #train()} is the MLP (64-64-32-10, ReLU) every digits test uses.
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
    List<double[]> rows = new ArrayList<>();
    List<Integer> labels = new ArrayList<>();
    try (var in = new BufferedReader(new InputStreamReader(
        new GZIPInputStream(Digits.class.getResourceAsStream("/digits/digits.csv.gz")), StandardCharsets.US_ASCII))) {
      String line;
      while ((line = in.readLine()) != null) {
        String[] f = line.split(",");
        double[] x = new double[64];
        for (int j = 0; j < 64; j++) x[j] = Double.parseDouble(f[j]) / 16.0;
        rows.add(x);
        labels.add((int) Double.parseDouble(f[64]));
      }
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
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
      y[i] = labels.get(order[i]);
    }
    return new Digits(x, y);
  }

  /** The trainer's MLP with hidden layers of 64 and 32 ReLU units on the training rows (seeded). */
  public Mlp train() {
    return MlpTrainer.train(Arrays.copyOf(x, nTrain), Arrays.copyOf(y, nTrain), 10,
        new MlpTrainer.Config(new int[] {64, 32}, 60, 32, 1e-3, 7));
  }
}
