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
 * ROC metrics against two outside references: scikit-learn's {@code roc_auc_score}, {@code
 * average_precision_score} and {@code roc_curve} (every point) on committed golden inputs
 * ({@code tools/golden/make_ood_metrics.py}, scikit-learn 1.9.1; we could not reproduce a table of
 * Fawcett, "An introduction to ROC analysis", Pattern Recognition Letters 2006, exactly, so the
 * library is the reference), and the definition of the Mann-Whitney U statistic (Mann &amp; Whitney
 * 1947; AUROC = U / (n1 n2), Hanley &amp; McNeil 1982) counted pair by pair, O(n1 n2), in this test.
 */
class RocMetricsTest {

  @Test
  void matchesScikitLearnGoldenValues() throws IOException {
    int cases = 0;
    try (BufferedReader r = new BufferedReader(new InputStreamReader(
        RocMetricsTest.class.getResourceAsStream("/golden/ood_metrics.csv"), StandardCharsets.UTF_8))) {
      String line;
      while ((line = r.readLine()) != null) {
        if (line.startsWith("#") || line.startsWith("case;")) continue;
        String[] f = line.split(";");
        double[] in = parse(f[1]), out = parse(f[2]);
        RocMetrics m = RocMetrics.of(in, out);
        assertThat(m.auroc()).as(f[0] + " auroc").isCloseTo(Double.parseDouble(f[3]), within(1e-12));
        assertThat(m.auprIn()).as(f[0] + " aupr_in").isCloseTo(Double.parseDouble(f[4]), within(1e-12));
        assertThat(m.auprOut()).as(f[0] + " aupr_out").isCloseTo(Double.parseDouble(f[5]), within(1e-12));
        assertThat(m.fprAt95Tpr()).as(f[0] + " fpr95").isCloseTo(Double.parseDouble(f[6]), within(1e-12));
        // roc_curve(y, s, drop_intermediate=False): one point per distinct threshold from the highest down
        String[] points = f[7].split(" ");
        assertThat(m.roc()).as(f[0] + " roc points").hasSize(points.length);
        for (int i = 0; i < points.length; i++) {
          String[] p = points[i].split(":");
          RocMetrics.Point got = m.roc().get(i);
          assertThat(got.threshold()).as(f[0] + " threshold " + i).isEqualTo(p[0].equals("inf") ? Double.POSITIVE_INFINITY : Double.parseDouble(p[0]));
          assertThat(got.falseAlarmRate()).as(f[0] + " fpr " + i).isCloseTo(Double.parseDouble(p[1]), within(1e-12));
          assertThat(got.detectionRate()).as(f[0] + " tpr " + i).isCloseTo(Double.parseDouble(p[2]), within(1e-12));
        }
        cases++;
      }
    }
    assertThat(cases).isEqualTo(14);
  }

  @Test
  void aurocIsMannWhitneyUCountedPairByPair() {
    for (int rep = 0; rep < 200; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n1 = 1 + rnd.nextInt(60), n2 = 1 + rnd.nextInt(60);
      boolean ties = rnd.nextBoolean();
      double[] in = new double[n1], out = new double[n2];
      for (int i = 0; i < n1; i++) in[i] = ties ? rnd.nextInt(8) : rnd.nextGaussian();
      for (int i = 0; i < n2; i++) out[i] = ties ? rnd.nextInt(10) : rnd.nextGaussian() + 0.5;
      double u = 0; // pairs where out beats in, ties one half
      for (double a : in) for (double b : out) u += b > a ? 1 : b == a ? 0.5 : 0;
      assertThat(RocMetrics.of(in, out).auroc()).as(Randoms.describe(seed)).isCloseTo(u / (n1 * (double) n2), within(1e-12));
      // FPR at 95% TPR by its definition: the smallest in score accepting >= 95% of in inputs
      double[] s = in.clone();
      Arrays.sort(s);
      double best = Double.NaN;
      for (double t : s) {
        int acc = 0;
        for (double a : in) if (a <= t) acc++;
        if (acc >= 0.95 * n1 - 1e-9) {
          best = t;
          break;
        }
      }
      int accOut = 0;
      for (double b : out) if (b <= best) accOut++;
      assertThat(RocMetrics.of(in, out).fprAt95Tpr()).as(Randoms.describe(seed)).isEqualTo(accOut / (double) n2);
    }
  }

  @Test
  void rocCurveRunsFromCornerToCorner() {
    RocMetrics m = RocMetrics.of(new double[] {0, 1, 1, 2}, new double[] {1, 3});
    assertThat(m.roc().getFirst().falseAlarmRate()).isZero();
    assertThat(m.roc().getLast().falseAlarmRate()).isEqualTo(1.0);
    assertThat(m.roc().getLast().detectionRate()).isEqualTo(1.0);
    // thresholds 3, 2, 1, 0: flagged out at >= t
    assertThat(m.roc()).extracting(RocMetrics.Point::detectionRate).containsExactly(0.0, 0.5, 0.5, 1.0, 1.0);
    assertThat(m.roc()).extracting(RocMetrics.Point::falseAlarmRate).containsExactly(0.0, 0.0, 0.25, 0.75, 1.0);
  }

  private static double[] parse(String s) {
    return Arrays.stream(s.trim().split(" ")).mapToDouble(Double::parseDouble).toArray();
  }
}
