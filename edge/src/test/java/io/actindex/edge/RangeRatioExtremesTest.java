package io.actindex.edge;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;
import static org.assertj.core.api.Assertions.within;

import java.math.BigDecimal;
import java.math.MathContext;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * The range ratio at the ends of the double range: a code layer of identity weights passes each
 * input through as its activation, so the ratio is {@code |x| / bound}, here against the exact value
 * (outside reference: java.math.BigDecimal, exact decimal arithmetic: the squares and their sum
 * exact, the square root and the quotient to 60 digits). Squaring activations of 1.4e154 or more
 * overflowed (+Infinity for a ratio of 1.4e154) and squaring those below 1e-162 underflowed (0 for
 * a positive ratio); neither may happen, and ordinary values give the same double as the plain
 * formula {@code Math.sqrt(sum of squares) / bound} that the C source and older bundles' tests use.
 */
class RangeRatioExtremesTest {
  private static final int N = 3;

  /** A bundle whose one code layer {@code h} has identity weights (h = relu(x)), bound {@code bound}. */
  private static EdgeBundle identity(double bound) {
    float[] eye = new float[N * N];
    for (int i = 0; i < N; i++) eye[i * N + i] = 1;
    List<EdgeBundle.Layer> layers = List.of(new EdgeBundle.Layer("h", N, N, eye, new float[N]),
        new EdgeBundle.Layer("o", 1, N, new float[N], new float[1]));
    return new EdgeBundle(List.of("h"), new int[] {N}, new long[] {0}, new int[] {1}, null,
        new EdgeBundle.Model(layers, new double[N], new double[] {bound}));
  }

  /** The exact ratio, sqrt(sum x^2) / bound, to 60 digits. */
  private static BigDecimal exact(double[] x, double bound) {
    MathContext mc = new MathContext(60);
    BigDecimal sum = BigDecimal.ZERO;
    for (double v : x) sum = sum.add(new BigDecimal(v).multiply(new BigDecimal(v)));
    return sum.sqrt(mc).divide(new BigDecimal(bound), mc);
  }

  private static void check(double[] x, double bound, String why) {
    double got = identity(bound).encodeWithRange(x).range();
    BigDecimal want = exact(x, bound);
    if (want.compareTo(new BigDecimal(Double.MAX_VALUE).multiply(new BigDecimal("1.0000001"))) > 0) {
      assertThat(got).as(why + ": the ratio is beyond the largest double").isEqualTo(Double.POSITIVE_INFINITY);
      return;
    }
    double w = want.doubleValue();
    assertThat(got).as(why + ": exact " + want.round(new MathContext(17))).isFinite().isCloseTo(w, within(4 * Math.ulp(w)));
  }

  @Test
  void hugeAndTinyActivationsGiveTheExactRatio() {
    double max = Double.MAX_VALUE;
    check(new double[] {1e154, 1e154, 0}, 1, "1e154 twice, bound 1"); // the squares overflowed: +Infinity before
    check(new double[] {1.5e154, 0, 0}, 1, "1.5e154, bound 1");
    check(new double[] {1e300, 3e299, 2e299}, 1e10, "1e300");
    check(new double[] {max, 0, 0}, 1, "MAX_VALUE, bound 1");
    check(new double[] {max, max, max}, 1e10, "MAX_VALUE three times, bound 1e10"); // the norm itself is beyond MAX_VALUE, the ratio is not
    check(new double[] {max, max, 0}, 2, "MAX_VALUE twice, bound 2");
    check(new double[] {max, 0, 0}, 0.5, "MAX_VALUE, bound 0.5"); // 2 x MAX_VALUE: +Infinity is the right answer
    check(new double[] {1e-200, 0, 3e-200}, 1e-190, "1e-200"); // the squares underflowed to 0: ratio 0 before
    check(new double[] {Double.MIN_VALUE, 0, 0}, Double.MIN_VALUE, "the smallest subnormal over itself");
    check(new double[] {1e-300, 0, 0}, 1e300, "1e-300 over 1e300");
    assertThat(identity(1e300).encodeWithRange(new double[] {1e-300, 0, 0}).range()).as("1e-600 rounds to 0").isZero();
    assertThat(identity(0).encodeWithRange(new double[] {Double.MIN_VALUE, 0, 0}).range()).as("bound 0, a unit on").isEqualTo(Double.POSITIVE_INFINITY);
    assertThat(identity(0).encodeWithRange(new double[] {-1, -max, 0}).range()).as("bound 0, every unit off").isZero();
  }

  @Test
  void randomMagnitudesAcrossTheWholeRangeGiveTheExactRatio() {
    for (long seed = 1; seed <= 400; seed++) {
      SplittableRandom rnd = new SplittableRandom(seed);
      double[] x = new double[N];
      int scale = rnd.nextInt(-330, 309);
      for (int i = 0; i < N; i++) x[i] = rnd.nextInt(4) == 0 ? 0 : Math.min(Double.MAX_VALUE, rnd.nextDouble(1, 10) * Math.pow(10, scale - rnd.nextInt(3)));
      double bound = rnd.nextDouble(1, 10) * Math.pow(10, rnd.nextInt(-300, 300));
      check(x, bound, "seed " + seed + ", x " + java.util.Arrays.toString(x) + ", bound " + bound);
    }
  }

  @Test
  void ordinaryValuesGiveThePlainFormulasDouble() {
    for (long seed = 1; seed <= 400; seed++) {
      SplittableRandom rnd = new SplittableRandom(seed);
      double[] x = new double[N];
      double s = 0;
      for (int i = 0; i < N; i++) {
        x[i] = rnd.nextDouble() * Math.pow(10, rnd.nextInt(-100, 100));
        s += x[i] * x[i];
      }
      double bound = rnd.nextDouble(0.5, 2) * Math.pow(10, rnd.nextInt(-100, 100));
      assertThat(identity(bound).encodeWithRange(x).range()).as("seed " + seed).isEqualTo(Math.sqrt(s) / bound);
    }
  }

  @Test
  void nonFiniteInputsAndOverflowingActivationsAreStillRefused() {
    EdgeBundle b = identity(1);
    for (double bad : new double[] {Double.NaN, Double.POSITIVE_INFINITY, Double.NEGATIVE_INFINITY})
      assertThatThrownBy(() -> b.encodeWithRange(new double[] {1, bad, 1})).isInstanceOf(IllegalArgumentException.class)
          .hasMessageContaining("input 1 is " + bad);
    float[] twice = {2, 0, 0, 0, 1, 0, 0, 0, 1};
    EdgeBundle doubling = new EdgeBundle(List.of("h"), new int[] {N}, new long[] {0}, new int[] {1}, null,
        new EdgeBundle.Model(List.of(new EdgeBundle.Layer("h", N, N, twice, new float[N]), new EdgeBundle.Layer("o", 1, N, new float[N], new float[1])),
            new double[N], new double[] {1}));
    assertThatThrownBy(() -> doubling.encodeWithRange(new double[] {Double.MAX_VALUE, 0, 0})).isInstanceOf(IllegalArgumentException.class)
        .hasMessageContaining("overflows");
  }
}
