package io.actindex.query.stats;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * Student's t and standard normal upper tails against {@code scipy.stats.t.sf} and {@code
 * scipy.stats.norm.sf} and against the same tails in 50-digit mpmath arithmetic, on the grids of
 * tools/golden/make_tails.py (outputs in {@code golden/tails}). SciPy is checked wherever it agrees
 * with mpmath (it does not at df = 1, |t| <= 1e-8: see the script). Where the reference is below
 * 1e-300 only smallness is checked (SciPy returns 0 for some tails that are still subnormal doubles).
 */
class TailsGoldenTest {
  static final double TINY = 1e-300;

  static List<double[]> rows(String name) throws IOException {
    try (InputStream in = TailsGoldenTest.class.getResourceAsStream("/golden/tails/" + name)) {
      if (in == null) throw new IllegalStateException("missing golden file tails/" + name);
      List<double[]> out = new ArrayList<>();
      for (String line : new String(in.readAllBytes(), StandardCharsets.US_ASCII).split("\n")) {
        if (line.startsWith("#") || line.isBlank()) continue;
        String[] f = line.split(",");
        double[] row = new double[f.length];
        for (int i = 0; i < f.length; i++) row[i] = Double.parseDouble(f[i]);
        out.add(row);
      }
      return out;
    }
  }

  /** Checks {@code got} against the SciPy and mpmath values; returns the relative errors against each (0 below TINY). */
  static double[] check(String at, double got, double scipy, double mpmath, double tolerance) {
    if (mpmath < TINY) {
      assertThat(got).as(at).isBetween(0.0, 1e-299);
      return new double[2];
    }
    assertThat(got).as(at + " against mpmath").isCloseTo(mpmath, within(tolerance * mpmath));
    boolean scipyAgrees = Math.abs(scipy - mpmath) <= tolerance * mpmath;
    if (scipyAgrees) assertThat(got).as(at + " against scipy").isCloseTo(scipy, within(tolerance * scipy));
    return new double[] {scipyAgrees ? Math.abs(got - scipy) / scipy : 0, Math.abs(got - mpmath) / mpmath};
  }

  @Test
  void studentTUpperTailMatchesSciPyAndMpmath() throws IOException {
    List<double[]> rows = rows("student_t.csv");
    assertThat(rows).hasSizeGreaterThan(3000);
    double[] worst = new double[2];
    for (double[] r : rows) {
      double[] e = check("df=" + r[0] + " t=" + r[1], StudentT.upperTail(r[1], r[0]), r[2], r[3], 1e-10);
      worst[0] = Math.max(worst[0], e[0]);
      worst[1] = Math.max(worst[1], e[1]);
    }
    System.out.println("StudentT.upperTail: largest relative error against scipy.stats.t.sf " + worst[0] + ", against mpmath " + worst[1]);
  }

  @Test
  void normalUpperTailMatchesSciPyAndMpmath() throws IOException {
    List<double[]> rows = rows("normal.csv");
    assertThat(rows).hasSizeGreaterThan(1600);
    double[] worst = new double[2];
    for (double[] r : rows) {
      double z = r[0];
      double[] e = check("z=" + z, Normal.upperTail(z), r[1], r[2], 1e-12);
      worst[0] = Math.max(worst[0], e[0]);
      worst[1] = Math.max(worst[1], e[1]);
      assertThat(Normal.twoSided(z)).as("z=" + z).isEqualTo(Math.min(1, 2 * Normal.upperTail(Math.abs(z))));
    }
    System.out.println("Normal.upperTail: largest relative error against scipy.stats.norm.sf " + worst[0] + ", against mpmath " + worst[1]);
  }

  @Test
  void normalUpperTailAtZeroIsOneHalf() {
    assertThat(Normal.upperTail(0)).isEqualTo(0.5);
    assertThat(Normal.upperTail(-0.0)).isEqualTo(0.5);
    assertThat(Normal.twoSided(0)).isEqualTo(1.0);
    assertThat(Normal.upperTail(Double.POSITIVE_INFINITY)).isZero();
    assertThat(Normal.upperTail(Double.NEGATIVE_INFINITY)).isEqualTo(1.0);
    assertThat(Normal.upperTail(Double.NaN)).isNaN();
  }

  @Test
  void studentTMatchesTheClosedFormsForOneAndTwoDegreesOfFreedom() {
    // df = 1 is the Cauchy law, P(T > t) = 1/2 - atan(t)/pi; df = 2 gives 1/2 - t / (2 sqrt(2 + t^2))
    // (from memory: both follow from integrating the t density in closed form)
    for (int i = -2000; i <= 2000; i++) {
      double t = Math.sinh(i / 200.0);
      double cauchy = t > 0 ? Math.atan(1 / t) / Math.PI : 0.5 - Math.atan(t) / Math.PI;
      assertThat(StudentT.upperTail(t, 1)).as("t=" + t).isCloseTo(cauchy, within(1e-12 * cauchy));
      double two = t > 0 ? 1 / (Math.sqrt(2 + t * t) * (Math.sqrt(2 + t * t) + t)) : 0.5 - t / (2 * Math.sqrt(2 + t * t));
      assertThat(StudentT.upperTail(t, 2)).as("t=" + t).isCloseTo(two, within(1e-12 * two));
    }
  }

  @Test
  void studentTIsSymmetricAndTendsToTheNormal() {
    for (double df : new double[] {1, 3, 30, 1e4}) {
      for (double t = 0; t <= 8; t += 0.125) {
        assertThat(StudentT.upperTail(t, df) + StudentT.upperTail(-t, df)).as("df=" + df + " t=" + t).isCloseTo(1.0, within(1e-15));
        assertThat(StudentT.upperTail(t, df)).as("df=" + df + " t=" + t).isGreaterThanOrEqualTo(Normal.upperTail(t));
      }
    }
    assertThat(StudentT.upperTail(0, 7)).isEqualTo(0.5);
    assertThat(StudentT.upperTail(Double.POSITIVE_INFINITY, 7)).isZero();
    assertThat(StudentT.upperTail(Double.NEGATIVE_INFINITY, 7)).isEqualTo(1.0);
    assertThat(StudentT.upperTail(Double.NaN, 7)).isNaN();
    // the t law tends to the normal as df grows (common practice); the first correction to the tail is a
    // relative (z^4 + z^2) / (4 df) (from memory), 3.3e-6 at z = 6 and df = 10^8
    for (double t = -6; t <= 6; t += 0.5)
      assertThat(StudentT.upperTail(t, 1e8)).as("t=" + t).isCloseTo(Normal.upperTail(t), within(1e-5 * Normal.upperTail(t)));
  }
}
