package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.core.Randoms;
import io.actindex.edge.EdgeBundle;
import java.util.Arrays;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * Conformal validity (Vovk, Gammerman &amp; Shafer, "Algorithmic Learning in a Random World", 2005,
 * sec. 2.1; the split-conformal quantile): on exchangeable data, P(p <= alpha) <= alpha, with equality
 * up to {@code floor(alpha (n + 1)) / (n + 1)} for continuous scores; the threshold at rank
 * {@code ceil(tpr (n + 1))} accepts a fresh score with probability at least tpr. Checked over many
 * seeds: the observed share must lie within 5 binomial standard deviations (a false failure about
 * once in a million runs per check: 4 deviations over 4,000 trials failed once, at 4.2, on a random
 * base seed; the exact ranks are checked in {@link #thresholdRankAndMinimumSize}).
 */
class ConformalTest {
  static final int TRIALS = 20_000, N = 99;

  @Test
  void pValuesAreValidOnContinuousScores() {
    double alpha = 0.1;
    int hits = 0, accepted = 0;
    for (int t = 0; t < TRIALS; t++) {
      SplittableRandom rnd = new SplittableRandom(Randoms.seed(t));
      double[] cal = new double[N];
      for (int i = 0; i < N; i++) cal[i] = rnd.nextGaussian();
      Arrays.sort(cal);
      double fresh = rnd.nextGaussian();
      if (EdgeBundle.pValue(cal, fresh) <= alpha) hits++;
      if (fresh <= OodCalibration.threshold(cal, 0.95, "test")) accepted++;
    }
    double expected = Math.floor(alpha * (N + 1)) / (N + 1); // exactly 0.1 here
    double sd = Math.sqrt(expected * (1 - expected) / TRIALS);
    assertThat(hits / (double) TRIALS).as("share of p <= alpha; base " + Randoms.describe(Randoms.base()))
        .isBetween(expected - 5 * sd, expected + 5 * sd);
    double acc = Math.ceil(0.95 * (N + 1)) / (N + 1); // P(fresh <= j-th smallest) = j / (n + 1) = 0.95
    double sdAcc = Math.sqrt(acc * (1 - acc) / TRIALS);
    assertThat(accepted / (double) TRIALS).isBetween(acc - 5 * sdAcc, acc + 5 * sdAcc);
  }

  @Test
  void pValuesStayValidWithTiedHammingLikeScores() {
    double alpha = 0.05;
    int hits = 0, accepted = 0;
    for (int t = 0; t < TRIALS; t++) {
      SplittableRandom rnd = new SplittableRandom(Randoms.seed(t));
      double[] cal = new double[N];
      for (int i = 0; i < N; i++) cal[i] = binomial(rnd, 30, 0.1);
      Arrays.sort(cal);
      double fresh = binomial(rnd, 30, 0.1);
      if (EdgeBundle.pValue(cal, fresh) <= alpha) hits++;
      if (fresh <= OodCalibration.threshold(cal, 0.95, "test")) accepted++;
    }
    double sd = Math.sqrt(alpha * (1 - alpha) / TRIALS);
    assertThat(hits / (double) TRIALS).as("ties make p conservative, never liberal").isLessThanOrEqualTo(alpha + 5 * sd);
    assertThat(accepted / (double) TRIALS).isGreaterThanOrEqualTo(0.95 - 5 * Math.sqrt(0.95 * 0.05 / TRIALS));
  }

  @Test
  void thresholdRankAndMinimumSize() {
    // ceil(0.95 * (n + 1)) <= n first holds at n = 19 (rank 19); at n = 18 the rank would be 19
    assertThat(OodCalibration.minimum(0.95)).isEqualTo(19);
    assertThat(OodCalibration.minimum(0.9)).isEqualTo(9);
    assertThat(OodCalibration.minimum(0.99)).isEqualTo(99);
    // the bound n >= tpr / (1 - tpr), counted up from 1 for rates whose answer is small enough to count to
    for (double tpr : new double[] {0.01, 0.5, 0.6, 0.75, 0.8, 0.95, 0.975, 0.999, 0.9999}) {
      long n = 1;
      while (Math.ceil(tpr * (n + 1) - 1e-9) > n) n++;
      assertThat(OodCalibration.minimum(tpr)).as("tpr " + tpr).isEqualTo(n);
    }
    // a rate near 1: about 1e12 inputs (the count stopped at 2^31 - 1 before)
    assertThat(OodCalibration.minimum(1 - 1e-12)).isBetween(999_000_000_000L, 1_001_000_000_000L);
    double[] s = new double[19];
    for (int i = 0; i < s.length; i++) s[i] = i;
    assertThat(OodCalibration.threshold(s, 0.95, "x")).isEqualTo(18.0);
    assertThatThrownBy(() -> OodCalibration.threshold(Arrays.copyOf(s, 18), 0.95, "cal.npy"))
        .isInstanceOf(BadInputException.class).hasMessageContaining("cal.npy").hasMessageContaining("needs at least 19");
    // p-value by its formula: (1 + #{cal >= s}) / (n + 1)
    assertThat(EdgeBundle.pValue(new double[] {1, 2, 2, 3}, 2)).isEqualTo(4 / 5.0);
    assertThat(EdgeBundle.pValue(new double[] {1, 2, 2, 3}, 3.5)).isEqualTo(1 / 5.0);
    assertThat(EdgeBundle.pValue(new double[] {1, 2, 2, 3}, 0)).isEqualTo(1.0);
  }

  private static double binomial(SplittableRandom rnd, int n, double p) {
    int c = 0;
    for (int i = 0; i < n; i++) if (rnd.nextDouble() < p) c++;
    return c;
  }
}
