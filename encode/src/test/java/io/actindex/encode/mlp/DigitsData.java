package io.actindex.encode.mlp;

import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStreamReader;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.zip.GZIPInputStream;

/**
 * The vendored UCI digits (test resource {@code digits/digits.csv.gz}, see its SOURCE.md): 1,797
 * rows of 64 pixel counts scaled to [0, 1] (divided by 16) and the digit. Shared with other
 * modules' tests through this module's test-jar.
 */
public record DigitsData(double[][] x, int[] y) {
  public static DigitsData load() {
    List<double[]> rows = new ArrayList<>();
    List<Integer> labels = new ArrayList<>();
    try (var in = new BufferedReader(new InputStreamReader(
        new GZIPInputStream(DigitsData.class.getResourceAsStream("/digits/digits.csv.gz")), StandardCharsets.US_ASCII))) {
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
    return new DigitsData(rows.toArray(new double[0][]), labels.stream().mapToInt(Integer::intValue).toArray());
  }
}
