package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import io.actindex.core.CodeBlock;
import io.actindex.encode.mlp.DigitsData;
import io.actindex.query.stats.FloatSample;
import io.actindex.query.stats.Frechet;
import io.actindex.query.stats.Wasserstein;
import java.io.IOException;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * {@link Compare#compute} on edge cases against NumPy/SciPy (tools/golden/make_compare_edges.py):
 * 1-bit codes (exact W2 also from {@code scipy.stats.wasserstein_distance}), unequal sizes (the
 * transport linear program, {@code scipy.optimize.linprog}), two rows per sample, every code
 * identical (median distance 0, so sigma 1), neurons constant in one or both samples ({@code
 * scipy.stats.norm.sf}, {@code scipy.stats.false_discovery_control}). MMD^2: Gretton et al., JMLR
 * 2012, eq. 3, from full kernel matrices.
 */
class CompareEdgesGoldenTest {
  static final List<String> CASES = List.of("bit_equal", "bit_unequal", "wide_unequal", "two_rows", "identical", "constant_neurons");
  static final GoldenFiles GOLDEN = new GoldenFiles("compare_edges");

  @Test
  void edgeCasesMatchNumPyAndSciPy() throws IOException {
    for (String c : CASES) {
      CodeBlock a = GOLDEN.codes(c + "_a.npy"), b = GOLDEN.codes(c + "_b.npy");
      int bits = a.layout().bits();
      // a small regularisation and a tight tolerance: the Sinkhorn plan's cost then lies just above the exact optimum
      Compare.Options o = new Compare.Options(50, 7, null, 0.05, bits, 2000, 3000, 4000, 0.001, 200_000, 1e-10, 1);
      Compare.Result r = Compare.compute(a, b, null, null, "A", "B", o);
      assertThat(r.mmd().get(0).mmd2()).as(c + " agreement").isCloseTo(GOLDEN.exp(c + ".agreement.mmd2"), within(1e-12));
      assertThat(r.mmd().get(1).sigma()).as(c + " sigma").isEqualTo(GOLDEN.exp(c + ".exponential.sigma"));
      assertThat(r.mmd().get(1).mmd2()).as(c + " exponential").isCloseTo(GOLDEN.exp(c + ".exponential.mmd2"), within(1e-12));
      double w2 = GOLDEN.exp(c + ".w2");
      if (a.size() == b.size()) {
        assertThat(r.w2().method()).as(c).isEqualTo(Wasserstein.Method.EXACT);
        assertThat(r.w2().w2()).as(c + " exact W2").isCloseTo(w2, within(1e-12));
      } else {
        assertThat(r.w2().method()).as(c).isEqualTo(Wasserstein.Method.SINKHORN);
        assertThat(r.w2().converged()).as(c).isTrue();
        assertThat(r.w2().w2()).as(c + " Sinkhorn W2 against the linear program").isBetween(w2 - 1e-6, w2 * 1.01);
      }
      assertThat(r.neurons()).as(c).hasSize(bits);
      for (Compare.Neuron n : r.neurons()) {
        String key = c + ".neuron." + n.name().substring(n.name().indexOf(':') + 1);
        assertThat(n.z()).as(key + " z").isCloseTo(GOLDEN.exp(key + ".z"), within(1e-12));
        // Normal's tail: relative error within 1e-12 of scipy.stats.norm.sf (TailsGoldenTest)
        assertThat(n.p()).as(key + " p").isCloseTo(GOLDEN.exp(key + ".p"), within(1e-12 * GOLDEN.exp(key + ".p") + 1e-300));
        assertThat(n.q()).as(key + " q").isCloseTo(GOLDEN.exp(key + ".q"), within(1e-12 * GOLDEN.exp(key + ".q") + 1e-300));
      }
    }
  }

  /**
   * A squared distance is never negative, and FD(A, A) = 0 (Dowson &amp; Landau 1982); the digits'
   * covariance is singular (constant border pixels), where rounding gave -2.5e-6 before.
   */
  @Test
  void frechetOfASampleWithItselfIsZeroNotNegative() {
    double[][] x = DigitsData.load().x();
    for (int rows : new int[] {20, 50, 200}) {
      double[] v = new double[rows * 64];
      for (int i = 0; i < rows; i++) System.arraycopy(x[i], 0, v, i * 64, 64);
      FloatSample s = new FloatSample(rows, 64, v);
      assertThat(Frechet.squared(s, s)).as(rows + " rows").isBetween(0.0, 1e-9);
    }
  }
}
