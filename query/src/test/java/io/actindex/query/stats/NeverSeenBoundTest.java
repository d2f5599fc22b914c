package io.actindex.query.stats;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;
import static org.assertj.core.api.Assertions.within;

import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

class NeverSeenBoundTest {

  /** Rows {n, bound} of golden/never-seen-bound.csv (tools/golden/make_never_seen_bound.py). */
  static List<double[]> golden() throws IOException {
    try (InputStream in = NeverSeenBoundTest.class.getResourceAsStream("/golden/never-seen-bound.csv")) {
      if (in == null) throw new IllegalStateException("missing golden file never-seen-bound.csv");
      List<double[]> out = new ArrayList<>();
      for (String line : new String(in.readAllBytes(), StandardCharsets.US_ASCII).split("\n")) {
        if (line.startsWith("#") || line.isBlank()) continue;
        String[] f = line.split(",");
        out.add(new double[] {Double.parseDouble(f[0]), Double.parseDouble(f[1])});
      }
      return out;
    }
  }

  /**
   * Against scipy.stats.beta.ppf(0.95, 1, n): the Clopper-Pearson upper limit for 0 successes in n
   * trials (scipy.stats.beta, Clopper &amp; Pearson, "The use of confidence or fiducial limits
   * illustrated in the case of the binomial", Biometrika 1934), n from 1 to 10^7.
   */
  @Test
  void upperBoundMatchesClopperPearsonFromSciPy() throws IOException {
    List<double[]> rows = golden();
    assertThat(rows).hasSizeGreaterThan(15);
    for (double[] r : rows)
      assertThat(NeverSeenBound.upper((long) r[0])).as("n = %d", (long) r[0]).isCloseTo(r[1], within(1e-12 * r[1]));
  }

  /**
   * The rule of three: for large n the bound is close to 3/n, a little below it (its limit is
   * -ln(0.05)/n = 2.996/n). Hanley &amp; Lippman-Hand, "If nothing goes wrong, is everything all
   * right? Interpreting zero numerators", JAMA 1983.
   */
  @Test
  void largeCountsFollowTheRuleOfThree() {
    for (long n : new long[] {1_000, 19_800, 1_000_000, 1L << 40}) {
      double times = NeverSeenBound.upper(n) * n;
      assertThat(times).as("n = %d", n).isLessThan(3.0).isGreaterThan(2.99);
    }
  }

  @Test
  void noExamplesGiveNoBound() {
    assertThat(NeverSeenBound.upper(0)).isNaN();
    assertThat(NeverSeenBound.upper(-4)).isNaN();
  }

  /** examplesFor(rate) is the first n whose bound is at most rate, checked by stepping n from 1. */
  @Test
  void examplesForIsTheFirstCountBelowTheRate() throws IOException {
    for (double rate : new double[] {0.95, 0.5, 0.2, 0.1, 0.05, 0.0499, 0.01, 0.003, 0.001}) {
      long n = 1;
      while (NeverSeenBound.upper(n) > rate) n++;
      assertThat(NeverSeenBound.examplesFor(rate)).as("rate %s", rate).isEqualTo(n);
    }
    // at 5%: the golden rows around it straddle the limit, so the answer is the first golden n at or below it
    List<double[]> rows = golden();
    long first = rows.stream().filter(r -> r[1] <= 0.05).mapToLong(r -> (long) r[0]).min().orElseThrow();
    long lastAbove = rows.stream().filter(r -> r[1] > 0.05).mapToLong(r -> (long) r[0]).max().orElseThrow();
    assertThat(first).as("the golden file has consecutive counts around 5%").isEqualTo(lastAbove + 1);
    assertThat(NeverSeenBound.examplesFor(0.05)).isEqualTo(first);
    assertThatThrownBy(() -> NeverSeenBound.examplesFor(0)).isInstanceOf(io.actindex.core.BadParameterException.class).hasMessageStartingWith("rate ");
    assertThatThrownBy(() -> NeverSeenBound.examplesFor(1)).isInstanceOf(io.actindex.core.BadParameterException.class).hasMessageStartingWith("rate ");
  }
}
