package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import io.actindex.core.Randoms;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStreamReader;
import java.nio.charset.StandardCharsets;
import java.util.Arrays;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * Spearman's rank correlation with ties. Outside reference: scipy.stats.spearmanr output committed
 * as a golden file (test resources golden/spearman.csv, written by tools/golden/make_spearman.py).
 * No textbook worked example with ties could be cited precisely here, so in addition every case is
 * recomputed independently with the tie-corrected sum-of-squared-rank-differences formula
 * rho = (Sx + Sy - sum d^2) / (2 sqrt(Sx Sy)), S = (n^3 - n)/12 - sum over tie groups (t^3 - t)/12
 * (Kendall &amp; Gibbons, Rank Correlation Methods, 5th ed., 1990, ch. 3 — from memory), with ranks
 * counted by a direct O(n^2) rule (1 + values below + (values equal - 1) / 2).
 */
class SpearmanTest {

  @Test
  void matchesScipyGoldenAndTheTieCorrectedFormula() throws IOException {
    int cases = 0;
    try (var in = new BufferedReader(new InputStreamReader(
        SpearmanTest.class.getResourceAsStream("/golden/spearman.csv"), StandardCharsets.UTF_8))) {
      for (String line; (line = in.readLine()) != null; ) {
        if (line.startsWith("#")) continue;
        String[] f = line.split(";");
        double[] x = parse(f[1]), y = parse(f[2]);
        double scipy = Double.parseDouble(f[3]);
        assertThat(Spearman.rho(x, y)).as(f[0] + " vs scipy").isCloseTo(scipy, within(1e-12));
        assertThat(tieCorrected(x, y)).as(f[0] + ": independent formula vs scipy").isCloseTo(scipy, within(1e-12));
        cases++;
      }
    }
    assertThat(cases).isEqualTo(4);
  }

  @Test
  void averageRanksOfTies() {
    // definition: tied values share the mean of the ranks they span (10 -> 1, the two 20s -> 2.5, 30 -> 4)
    assertThat(Spearman.ranks(new double[] {20, 10, 30, 20})).containsExactly(2.5, 1, 4, 2.5);
    assertThat(Spearman.ranks(new double[] {5, 5, 5})).containsExactly(2, 2, 2);
  }

  @Test
  void randomSamplesWithManyTiesAgreeWithTheFormula() {
    for (int t = 0; t < 200; t++) {
      long seed = Randoms.seed(t);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = 2 + rnd.nextInt(60);
      double[] x = new double[n], y = new double[n];
      for (int i = 0; i < n; i++) {
        x[i] = rnd.nextInt(1 + rnd.nextInt(8)); // small integer ranges: many ties, like Hamming distances
        y[i] = rnd.nextInt(3) == 0 ? x[i] + rnd.nextInt(3) : rnd.nextDouble();
      }
      double want = tieCorrected(x, y), got = Spearman.rho(x, y);
      if (Double.isNaN(want)) assertThat(got).as(Randoms.describe(seed)).isNaN();
      else assertThat(got).as(Randoms.describe(seed)).isCloseTo(want, within(1e-9));
    }
  }

  @Test
  void constantSampleHasNoCorrelation() {
    assertThat(Spearman.rho(new double[] {1, 1, 1}, new double[] {1, 2, 3})).isNaN();
    assertThat(Spearman.rho(new double[] {1}, new double[] {2})).isNaN();
  }

  private static double[] parse(String s) {
    return Arrays.stream(s.trim().split(" ")).mapToDouble(Double::parseDouble).toArray();
  }

  /** The tie-corrected formula with ranks counted directly. */
  static double tieCorrected(double[] x, double[] y) {
    int n = x.length;
    double[] rx = directRanks(x), ry = directRanks(y);
    double d2 = 0;
    for (int i = 0; i < n; i++) d2 += (rx[i] - ry[i]) * (rx[i] - ry[i]);
    double sx = ((double) n * n * n - n) / 12 - ties(x), sy = ((double) n * n * n - n) / 12 - ties(y);
    if (sx == 0 || sy == 0) return Double.NaN;
    return (sx + sy - d2) / (2 * Math.sqrt(sx * sy));
  }

  private static double[] directRanks(double[] v) {
    double[] r = new double[v.length];
    for (int i = 0; i < v.length; i++) {
      int below = 0, equal = 0;
      for (double w : v) {
        if (w < v[i]) below++;
        if (w == v[i]) equal++;
      }
      r[i] = 1 + below + (equal - 1) / 2.0;
    }
    return r;
  }

  /** Sum over tie groups of (t^3 - t) / 12. */
  private static double ties(double[] v) {
    double[] s = v.clone();
    Arrays.sort(s);
    double sum = 0;
    for (int i = 0; i < s.length; ) {
      int j = i;
      while (j < s.length && s[j] == s[i]) j++;
      double t = j - i;
      sum += (t * t * t - t) / 12;
      i = j;
    }
    return sum;
  }
}
