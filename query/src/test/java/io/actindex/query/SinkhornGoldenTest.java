package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import io.actindex.core.CodeBlock;
import io.actindex.query.stats.Wasserstein;
import java.io.IOException;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The entropic W2 against POT (Python Optimal Transport, Flamary et al., JMLR 22, 2021),
 * {@code ot.sinkhorn(..., method="sinkhorn_log")} run to a marginal violation of 1e-13 and checked
 * in the script against its own NumPy log-domain loop ({@code tools/golden/make_sinkhorn.py},
 * outputs in {@code golden/sinkhorn}): ReLU-like 64-bit codes at regularisations 0.05 and 0.01,
 * 256-bit codes, and rows so far from every code of the other sample that their kernel entries
 * all underflow.
 */
class SinkhornGoldenTest {
  static final List<String> CASES = List.of("relu64", "relu64_small_reg", "wide256", "outliers");
  static final GoldenFiles GOLDEN = new GoldenFiles("sinkhorn");

  @Test
  void transportCostMatchesPot() throws IOException {
    for (String c : CASES) {
      String files = c.equals("relu64_small_reg") ? "relu64" : c;
      CodeBlock a = GOLDEN.codes(files + "_a.npy"), b = GOLDEN.codes(files + "_b.npy");
      double reg = GOLDEN.exp(c + ".reg"), cost = GOLDEN.exp(c + ".cost");
      for (int threads : new int[] {1, 3}) {
        // converged tightly: the fixed point itself
        Wasserstein.Result tight = Wasserstein.sinkhorn(a, b, reg, 100_000, 1e-12, threads);
        assertThat(tight.converged()).as(c).isTrue();
        assertThat(tight.epsilon()).as(c + " epsilon").isCloseTo(GOLDEN.exp(c + ".epsilon"), within(1e-12 * tight.epsilon()));
        assertThat(tight.w2() * tight.w2()).as(c + " <P, C> at tol 1e-12").isCloseTo(cost, within(1e-8 * cost));
        // the command's default tolerance: a marginal error of 1e-5 moves the cost by far less than 1e-3 of it
        Wasserstein.Result usual = Wasserstein.sinkhorn(a, b, reg, 100_000, 1e-5, threads);
        assertThat(usual.converged()).as(c).isTrue();
        assertThat(usual.marginalError()).as(c).isLessThan(1e-5);
        assertThat(usual.w2() * usual.w2()).as(c + " <P, C> at tol 1e-5").isCloseTo(cost, within(1e-3 * cost));
      }
    }
  }
}
