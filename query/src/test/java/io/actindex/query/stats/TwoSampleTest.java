package io.actindex.query.stats;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.SyntheticCodes;
import io.actindex.core.Randoms;
import java.util.Arrays;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;

/** Properties of the two-sample statistics that hold by construction or by a published closed form. */
class TwoSampleTest {

  static CodeBlock codes(SplittableRandom r, int n, double[] rates) {
    return SyntheticCodes.bernoulli(r, n, rates);
  }

  static double[] rates(SplittableRandom r, int bits) {
    double[] p = new double[bits];
    for (int b = 0; b < bits; b++) p[b] = 0.1 + 0.8 * r.nextDouble();
    return p;
  }

  /** Rejections at level 0.05 over {@code runs} seeded pairs of samples, exponential kernel. */
  static int rejections(long base, int runs, boolean shifted) {
    int rejected = 0;
    for (int run = 0; run < runs; run++) {
      SplittableRandom r = new SplittableRandom(base + run);
      double[] p = rates(r, 48), q = p.clone();
      if (shifted) for (int b = 0; b < 12; b++) q[b] = Math.min(0.95, p[b] + 0.35);
      CodeBlock a = codes(r, 30, p), b = codes(r, 30, q);
      PairDistances d = new PairDistances(a.concat(b), 30, 1);
      double sigma = Math.max(1, d.median(0));
      PermutationTest t = d.kernel(x -> Math.exp(-x / sigma)).test(30, Permutations.seeded(r.nextLong()), 199, 1);
      if (t.pValue() <= 0.05) rejected++;
    }
    return rejected;
  }

  @Test
  @Tag("slow")
  void nullRejectsAboutFivePercentAndShiftRejectsNearlyAlways() {
    long base = Randoms.seed(1);
    int runs = 2000;
    int nullRejected = rejections(base, runs, false);
    // a valid permutation test rejects with probability at most floor(0.05 * 200) / 200 = 0.05 under the null
    // (ties make it conservative: 0.047 measured over 8,000 runs); binomial(2000, 0.05): below 57 or above 149
    // each has probability below 1e-6 (scipy.stats.binom), so a valid test fails here about once in 600,000
    // runs, while a test of size 0.075 fails half the time (400 runs with 3.5 sd bounds failed once at 36 of 400)
    assertThat(nullRejected).as(Randoms.describe(base)).isBetween(57, 149);
    int shiftRejected = rejections(base + 1_000_000, 50, true);
    assertThat(shiftRejected).as(Randoms.describe(base)).isGreaterThanOrEqualTo(48);
  }

  @Test
  void agreementPermutationNullHasMeanNearZeroAndIdenticalLabelingsReproduce() {
    long seed = Randoms.seed(2);
    SplittableRandom r = new SplittableRandom(seed);
    double[] p = rates(r, 100);
    CodeBlock a = codes(r, 50, p), b = codes(r, 70, p);
    AgreementMmd mmd = new AgreementMmd(a.concat(b), 50);
    PermutationTest t1 = mmd.test(new int[][] {{0, 100}}, Permutations.seeded(7), 500, 1)[0];
    PermutationTest t2 = mmd.test(new int[][] {{0, 100}}, Permutations.seeded(7), 500, 3)[0];
    assertThat(t2).as(Randoms.describe(seed)).isEqualTo(t1);
    // MMD^2_u is unbiased: its mean over relabelings (an exchangeable null) is 0 up to sampling error (5 sd: a false failure about once in 1.7 million runs)
    assertThat(Math.abs(t1.nullMean())).as(Randoms.describe(seed)).isLessThan(5 * t1.nullSd() / Math.sqrt(500));
  }

  @Test
  void linearTimeEstimatorRejectsAShiftAndNotItsOwnSample() {
    long seed = Randoms.seed(3);
    SplittableRandom r = new SplittableRandom(seed);
    double[] p = rates(r, 64), q = p.clone();
    for (int b = 0; b < 20; b++) q[b] = Math.min(0.95, p[b] + 0.4);
    CodeBlock a = codes(r, 4000, p), b = codes(r, 4000, q), a2 = codes(r, 4000, p);
    LinearMmd.Result shift = LinearMmd.of(a, b, d -> Math.exp(-d / 25.0), seed);
    assertThat(shift.pValue()).as(Randoms.describe(seed)).isLessThan(1e-6);
    assertThat(shift.pairs()).isEqualTo(2000);
    // under the null the z score is approximately standard normal: |z| < 5 is a 1-in-1.7-million miss
    LinearMmd.Result same = LinearMmd.of(a, a2, d -> Math.exp(-d / 25.0), seed);
    assertThat(Math.abs(same.z())).as(Randoms.describe(seed)).isLessThan(5);
  }

  @Test
  void linearTimeTestWithFewPairsTakesItsPValueFromStudentsT() {
    // the mean of the pairs' h over its estimated standard error is referred to Student's t with
    // pairs - 1 degrees of freedom (common practice: the one-sample t test); with 2 pairs that is
    // the Cauchy law, P(T > z) = 1/2 - atan(z)/pi (from memory)
    int checked = 0;
    for (int rep = 0; rep < 20; rep++) {
      long seed = Randoms.seed(40 + rep);
      SplittableRandom r = new SplittableRandom(seed);
      int n = 4 + r.nextInt(2);
      CodeBlock a = constant(n, 16, true), b = codes(r, n, rates(r, 16));
      LinearMmd.Result two = LinearMmd.of(a, b, d -> Math.exp(-d / 4.0), seed);
      if (Double.isNaN(two.z())) continue;
      assertThat(two.pairs()).isEqualTo(2);
      assertThat(two.pValue()).as(Randoms.describe(seed)).isCloseTo(0.5 - Math.atan(two.z()) / Math.PI, within(1e-12));
      CodeBlock c = constant(10, 16, false), e = codes(r, 11, rates(r, 16));
      LinearMmd.Result five = LinearMmd.of(c, e, x -> Math.exp(-x / 4.0), seed);
      if (Double.isNaN(five.z())) continue;
      assertThat(five.pairs()).isEqualTo(5);
      assertThat(five.pValue()).as(Randoms.describe(seed)).isEqualTo(StudentT.upperTail(five.z(), 4));
      // with 4 degrees of freedom P(T > z) = 1/2 - z (z^2 + 6) / (2 (z^2 + 4)^(3/2)) (from memory; checked
      // against scipy.stats.t.sf), far above the normal tail used before for the same z
      double z = five.z(), closed = 0.5 - z * (z * z + 6) / (2 * Math.pow(z * z + 4, 1.5));
      assertThat(five.pValue()).as(Randoms.describe(seed)).isCloseTo(closed, within(1e-12));
      checked++;
    }
    assertThat(checked).isGreaterThan(10);
  }

  @Test
  void linearTimeTestOnConstantSamplesGivesTheExactSignFlipPValue() {
    // every row the same code: each pair's h is the same number, so z (variance 0) is
    // undefined; swapping x_2i and y_2i negates h_i (from memory), so under the null the 2^pairs sign
    // patterns are equally likely: p = 1 for h = 0 (as the permutation tests give for identical
    // samples), 2^-pairs for h > 0 (only the all-plus pattern reaches it)
    for (int bits : new int[] {1, 8, 70}) {
      for (int n : new int[] {4, 5, 10, 31}) {
        CodeBlock ones = constant(n, bits, true), zeros = constant(n + 3, bits, false);
        LinearMmd.Result same = LinearMmd.of(ones, constant(n, bits, true), d -> Math.exp(-d / 3.0), 7);
        assertThat(same.mmd2()).as(bits + " bits, " + n + " rows").isZero();
        assertThat(same.z()).as(bits + " bits, " + n + " rows").isNaN();
        assertThat(same.pValue()).as(bits + " bits, " + n + " rows").isEqualTo(1.0);
        LinearMmd.Result apart = LinearMmd.of(ones, zeros, d -> Math.exp(-d / 3.0), 7);
        assertThat(apart.mmd2()).as(bits + " bits, " + n + " rows").isCloseTo(2 - 2 * Math.exp(-bits / 3.0), within(1e-12));
        assertThat(apart.z()).as(bits + " bits, " + n + " rows").isNaN();
        assertThat(apart.pValue()).as(bits + " bits, " + n + " rows").isEqualTo(Math.pow(2, -(n / 2)));
      }
    }
  }

  static CodeBlock constant(int n, int bits, boolean on) {
    boolean[][] rows = new boolean[n][bits];
    for (boolean[] row : rows) Arrays.fill(row, on);
    return CodeBlock.fromBits(CodeLayout.single("c", bits), rows);
  }

  @Test
  void w2OfASampleWithItselfIsZeroAndW2IsSymmetric() {
    for (int rep = 0; rep < 5; rep++) {
      long seed = Randoms.seed(10 + rep);
      SplittableRandom r = new SplittableRandom(seed);
      double[] p = rates(r, 90);
      CodeBlock a = codes(r, 40, p), b = codes(r, 40, rates(r, 90));
      assertThat(Wasserstein.exact(a, a, 1).w2()).as(Randoms.describe(seed)).isZero();
      assertThat(Wasserstein.exact(a, b, 1).w2()).as(Randoms.describe(seed)).isEqualTo(Wasserstein.exact(b, a, 2).w2());
      Wasserstein.Result ab = Wasserstein.sinkhorn(a, b.slice(0, 30), 0.01, 5000, 1e-9, 1);
      Wasserstein.Result ba = Wasserstein.sinkhorn(b.slice(0, 30), a, 0.01, 5000, 1e-9, 2);
      assertThat(ab.w2()).as(Randoms.describe(seed)).isCloseTo(ba.w2(), within(1e-6 * ab.w2()));
    }
  }

  @Test
  void sinkhornTellsEachIterationAndAnswersAsWithoutBeingWatched() {
    for (int rep = 0; rep < 4; rep++) {
      long seed = Randoms.seed(60 + rep);
      SplittableRandom r = new SplittableRandom(seed);
      CodeBlock a = codes(r, 50, rates(r, 70)), b = codes(r, 35, rates(r, 70));
      int maxIter = rep == 0 ? 3 : 5000; // rep 0 stops at maxIter unconverged, the others converge
      java.util.List<Integer> told = new java.util.ArrayList<>();
      Wasserstein.Result watched = Wasserstein.sinkhorn(a, b, 0.05, maxIter, 1e-9, 1 + rep % 2, told::add);
      Wasserstein.Result plain = Wasserstein.sinkhorn(a, b, 0.05, maxIter, 1e-9, 1 + rep % 2);
      assertThat(watched.w2()).as(Randoms.describe(seed)).isEqualTo(plain.w2());
      assertThat(told).as(Randoms.describe(seed)).hasSize(plain.iterations());
      for (int i = 0; i < told.size(); i++) assertThat(told.get(i)).as(Randoms.describe(seed)).isEqualTo(i + 1);
    }
  }

  @Test
  void assignmentMatchesBruteForceOverAllPermutations() {
    for (int rep = 0; rep < 30; rep++) {
      long seed = Randoms.seed(20 + rep);
      SplittableRandom r = new SplittableRandom(seed);
      int n = 1 + r.nextInt(7);
      long[] cost = new long[n * n];
      for (int i = 0; i < cost.length; i++) cost[i] = r.nextInt(rep % 2 == 0 ? 5 : 1000);
      long best = bruteForce(n, cost, new int[n], new boolean[n], 0);
      Assignment.Result a = Assignment.solve(n, cost);
      assertThat(a.cost()).as(Randoms.describe(seed)).isEqualTo(best);
      long check = 0;
      boolean[] seen = new boolean[n];
      for (int i = 0; i < n; i++) {
        assertThat(seen[a.columnOf()[i]]).isFalse();
        seen[a.columnOf()[i]] = true;
        check += cost[i * n + a.columnOf()[i]];
      }
      assertThat(check).isEqualTo(best);
    }
  }

  private static long bruteForce(int n, long[] cost, int[] perm, boolean[] used, int row) {
    if (row == n) {
      long s = 0;
      for (int i = 0; i < n; i++) s += cost[i * n + perm[i]];
      return s;
    }
    long best = Long.MAX_VALUE;
    for (int j = 0; j < n; j++) {
      if (used[j]) continue;
      used[j] = true;
      perm[row] = j;
      best = Math.min(best, bruteForce(n, cost, perm, used, row + 1));
      used[j] = false;
    }
    return best;
  }

  @Test
  void sinkhornApproachesExactW2AsRegularisationShrinks() {
    for (int rep = 0; rep < 3; rep++) {
      long seed = Randoms.seed(60 + rep);
      SplittableRandom r = new SplittableRandom(seed);
      CodeBlock a = codes(r, 25, rates(r, 64)), b = codes(r, 25, rates(r, 64));
      double exact = Wasserstein.exact(a, b, 1).w2();
      double previous = Double.POSITIVE_INFINITY;
      for (double reg : new double[] {0.5, 0.1, 0.05, 0.02, 0.01}) {
        Wasserstein.Result s = Wasserstein.sinkhorn(a, b, reg, 200_000, 1e-5, 1);
        assertThat(s.converged()).as("reg " + reg + " " + Randoms.describe(seed)).isTrue();
        // the entropic plan is feasible: its cost is at least the optimum, and falls toward it
        assertThat(s.w2()).as("reg " + reg + " " + Randoms.describe(seed)).isGreaterThanOrEqualTo(exact * (1 - 1e-4));
        assertThat(s.w2()).as("reg " + reg + " " + Randoms.describe(seed)).isLessThanOrEqualTo(previous * (1 + 1e-4));
        previous = s.w2();
      }
      assertThat(previous).as(Randoms.describe(seed)).isCloseTo(exact, within(0.01 * exact));
    }
  }

  @Test
  void frechetOfUnivariateGaussiansIsTheClosedForm() {
    // Dowson & Landau 1982: for N(m1, s1^2) and N(m2, s2^2), FD^2 = (m1 - m2)^2 + (s1 - s2)^2
    long seed = Randoms.seed(70);
    SplittableRandom r = new SplittableRandom(seed);
    double[] x = new double[500], y = new double[300];
    for (int i = 0; i < x.length; i++) x[i] = 1 + 2 * r.nextDouble();
    for (int i = 0; i < y.length; i++) y[i] = -3 + 5 * r.nextDouble() * r.nextDouble();
    double m1 = mean(x), m2 = mean(y), s1 = Math.sqrt(var(x, m1)), s2 = Math.sqrt(var(y, m2));
    double fd = Frechet.squared(new FloatSample(x.length, 1, x), new FloatSample(y.length, 1, y));
    assertThat(fd).as(Randoms.describe(seed)).isCloseTo((m1 - m2) * (m1 - m2) + (s1 - s2) * (s1 - s2), within(1e-9));
    // and a sample against itself
    assertThat(Frechet.squared(new FloatSample(x.length, 1, x), new FloatSample(x.length, 1, x))).isCloseTo(0, within(1e-9));
  }

  static double mean(double[] v) {
    double s = 0;
    for (double x : v) s += x;
    return s / v.length;
  }

  static double var(double[] v, double m) {
    double s = 0;
    for (double x : v) s += (x - m) * (x - m);
    return s / (v.length - 1);
  }
}
