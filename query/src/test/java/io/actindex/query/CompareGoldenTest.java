package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import io.actindex.core.CodeBlock;
import io.actindex.encode.io.NpyReader;
import io.actindex.query.stats.AgreementMmd;
import io.actindex.query.stats.FiringRates;
import io.actindex.query.stats.FloatSample;
import io.actindex.query.stats.Frechet;
import io.actindex.query.stats.GaussianMmd;
import io.actindex.query.stats.Normal;
import io.actindex.query.stats.PairDistances;
import io.actindex.query.stats.PermutationTest;
import io.actindex.query.stats.Permutations;
import io.actindex.query.stats.Wasserstein;
import java.io.IOException;
import java.util.List;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * The compare statistics against NumPy/SciPy on committed inputs (tools/golden/make_compare.py):
 * MMD^2_u and its permutation p-value over the same fixed permutation list (Gretton et al., JMLR
 * 2012, eq. 3; p-value rule of Phipson &amp; Smyth 2010), the median heuristic ({@code np.median}
 * of {@code scipy.spatial.distance.pdist}), exact W2 ({@code scipy.optimize.linear_sum_assignment}),
 * the Frechet distance ({@code scipy.linalg.sqrtm}, {@code np.cov}), z tests ({@code
 * scipy.stats.norm.sf}) and Benjamini-Hochberg ({@code scipy.stats.false_discovery_control}).
 */
class CompareGoldenTest {
  static final GoldenFiles GOLDEN = new GoldenFiles("compare");
  static Permutations fixed;
  static int permCount;

  @BeforeAll
  static void load() throws IOException {
    FloatSample perms = Compare.readFloats(GOLDEN.path("perms.npy"), List.of());
    permCount = perms.rows();
    fixed = (p, order) -> {
      for (int i = 0; i < order.length; i++) order[i] = (int) perms.values()[p * perms.cols() + i];
    };
  }

  @Test
  void mmdAndPermutationPValuesMatchNumPy() throws IOException {
    CodeBlock a = GOLDEN.codes("codes_a.npy");
    for (String other : List.of("codes_b.npy", "codes_c.npy")) {
      String pre = other.equals("codes_b.npy") ? "" : "null.";
      CodeBlock b = GOLDEN.codes(other);
      CodeBlock pooled = a.concat(b);
      PermutationTest agree = new AgreementMmd(pooled, a.size()).test(new int[][] {{0, 70}}, fixed, permCount, 2)[0];
      assertThat(agree.statistic()).as(pre + "agreement").isCloseTo(GOLDEN.exp(pre + "agreement.mmd2"), within(1e-12));
      assertThat(agree.pValue()).as(pre + "agreement p").isEqualTo(GOLDEN.exp(pre + "agreement.p"));

      PairDistances d = new PairDistances(pooled, a.size(), 1);
      double sigma = d.median(0);
      assertThat(sigma).isEqualTo(GOLDEN.exp(pre + "exponential.sigma"));
      PermutationTest e = d.kernel(x -> Math.exp(-x / sigma)).test(a.size(), fixed, permCount, 3);
      assertThat(e.statistic()).as(pre + "exponential").isCloseTo(GOLDEN.exp(pre + "exponential.mmd2"), within(1e-12));
      assertThat(d.mmd2(0, x -> Math.exp(-x / sigma))).isCloseTo(GOLDEN.exp(pre + "exponential.mmd2"), within(1e-12));
      assertThat(e.pValue()).as(pre + "exponential p").isEqualTo(GOLDEN.exp(pre + "exponential.p"));
      // the agreement kernel through the matrix gives the same as through per-bit counts
      PermutationTest viaMatrix = d.kernel(x -> 1 - x / 70.0).test(a.size(), fixed, permCount, 1);
      assertThat(viaMatrix.statistic()).isCloseTo(agree.statistic(), within(1e-12));
      assertThat(viaMatrix.pValue()).isEqualTo(agree.pValue());
    }
  }

  @Test
  void gaussianMmdAndFrechetMatchSciPy() {
    FloatSample fa = Compare.readFloats(GOLDEN.path("floats_a.npy"), List.of()), fb = Compare.readFloats(GOLDEN.path("floats_b.npy"), List.of());
    GaussianMmd.Kernel k = GaussianMmd.of(fa.concat(fb), null, 2);
    assertThat(k.sigma()).isCloseTo(GOLDEN.exp("gaussian.sigma"), within(1e-12));
    PermutationTest t = k.matrix().test(fa.rows(), fixed, permCount, 2);
    assertThat(t.statistic()).isCloseTo(GOLDEN.exp("gaussian.mmd2"), within(1e-12));
    assertThat(t.pValue()).isEqualTo(GOLDEN.exp("gaussian.p"));
    assertThat(Frechet.squared(fa, fb)).isCloseTo(GOLDEN.exp("frechet"), within(1e-9 * GOLDEN.exp("frechet")));
  }

  @Test
  void exactW2MatchesLinearSumAssignment() throws IOException {
    for (String name : List.of("w_small", "w_large")) {
      Wasserstein.Result r = Wasserstein.exact(GOLDEN.codes(name + "_a.npy"), GOLDEN.codes(name + "_b.npy"), 2);
      assertThat(r.w2()).as(name).isCloseTo(GOLDEN.exp(name + ".w2"), within(1e-12));
      assertThat(r.method()).isEqualTo(Wasserstein.Method.EXACT);
    }
  }

  @Test
  void firingRateTestsAndBenjaminiHochbergMatchSciPy() throws IOException {
    FiringRates.Result r = FiringRates.of(GOLDEN.codes("codes_a.npy"), GOLDEN.codes("codes_b.npy"));
    for (int i = 0; i < 70; i++) {
      assertThat(r.z()[i]).as("z " + i).isCloseTo(GOLDEN.exp("neuron." + i + ".z"), within(1e-12));
      // Normal's tail: relative error within 1e-12 of scipy.stats.norm.sf (TailsGoldenTest)
      assertThat(r.p()[i]).as("p " + i).isCloseTo(GOLDEN.exp("neuron." + i + ".p"), within(1e-12 * GOLDEN.exp("neuron." + i + ".p") + 1e-300));
      assertThat(r.q()[i]).as("q " + i).isCloseTo(GOLDEN.exp("neuron." + i + ".q"), within(1e-12 * GOLDEN.exp("neuron." + i + ".q") + 1e-300));
    }
  }

  @Test
  void normalTailMatchesSciPy() {
    for (double z : new double[] {0.0, 0.5, 1.0, 1.959963984540054, 3.0, 5.0, 8.0}) {
      double want = GOLDEN.exp("normal.two_sided." + z);
      assertThat(Normal.twoSided(z)).as("z=" + z).isCloseTo(want, within(1e-12 * want));
    }
  }
}
