package io.actindex.index.mih;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * The greedy's shortcut (a table whose key already splits every distinct sample row takes the
 * first bit left unscored) gives the plan of the plain greedy that scores every bit at every
 * step: on random, skewed ReLU-like and duplicated codes, few and many rows (the sample saturates
 * after about log2 of its rows), narrow and wide codes cut into few and many tables.
 */
class BitPlanGreedyTest {
  @Test
  void shortcutGivesThePlainGreedysPlan() {
    int cases = 0, saturated = 0;
    for (int rep = 0; rep < 40; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = new int[] {1, 2, 7, 60, 300, 1000, 9000}[rnd.nextInt(7)];
      int bits = new int[] {3, 64, 65, 200, 700}[rnd.nextInt(5)];
      CodeBlock codes = switch (rep % 3) {
        case 0 -> SyntheticCodes.uniform(n, bits, seed);
        case 1 -> skewed(rnd, n, bits);
        default -> { // few distinct codes: the sample's rows never all split apart
          CodeBlock u = SyntheticCodes.uniform(n, bits, seed);
          long[] all = new long[u.wordsPerCode()];
          java.util.Arrays.fill(all, -1L);
          yield SyntheticCodes.tiedUnder(u, all, 1 + rnd.nextInt(5), seed);
        }
      };
      int[] chosen = new int[bits];
      double[] entropy = new double[bits];
      long[] counts = BitPlan.bitCounts(codes);
      for (int b = 0; b < bits; b++) {
        chosen[b] = b;
        entropy[b] = BitPlan.binaryEntropy(counts[b] / (double) n);
      }
      int m = 1 + rnd.nextInt(Math.min(bits, 12));
      int[][] fast = BitPlan.balanced(codes, chosen, entropy, m, false), plain = BitPlan.balanced(codes, chosen, entropy, m, true);
      String what = n + " codes of " + bits + " bits in " + m + " tables, " + Randoms.describe(seed);
      assertThat(fast).as(what).isDeepEqualTo(plain);
      cases++;
      if ((double) bits / m > 2 * Math.log(Math.max(2, n)) / Math.log(2)) saturated++;
    }
    assertThat(cases).isEqualTo(40);
    assertThat(saturated).as("cases where some table must saturate before it is full").isGreaterThan(5);
  }

  private static CodeBlock skewed(SplittableRandom rnd, int n, int bits) {
    double[] rates = new double[bits];
    for (int b = 0; b < bits; b++) rates[b] = rnd.nextInt(4) == 0 ? (rnd.nextBoolean() ? 0.0 : 1.0) : rnd.nextDouble() * rnd.nextDouble();
    return SyntheticCodes.bernoulli(rnd, n, rates);
  }
}
