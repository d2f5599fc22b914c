package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/** What the planner chooses (by work counters, never by time), and that each choice stays exact. */
class PlannerTest {

  @Test
  void nearQueriesUseTheTablesAndVisitFewCodes() {
    long seed = Randoms.seed(1);
    SplittableRandom rnd = new SplittableRandom(seed);
    CodeBlock codes = SyntheticCodes.uniform(50_000, 256, seed);
    MihSearcher s = (MihSearcher) Searchers.build(codes, SearchPlanOptions.defaults(), PlannerCosts.defaults());
    for (int i = 0; i < 20; i++) {
      long[] q = codes.code(rnd.nextInt(codes.size()));
      q[rnd.nextInt(4)] ^= 1L << rnd.nextInt(64);
      assertEquals(BruteForce.radius(codes, q, 4, null, null), s.radius(q, 4), Randoms.describe(seed));
      long[] work = s.lastQueryWork();
      assertEquals(0, work[2], Randoms.describe(seed) + " radius 4 should not scan");
      assertTrue(work[1] < codes.size() / 100, Randoms.describe(seed) + " visited " + work[1]);
    }
  }

  /**
   * Masked far queries: the tables lie inside the layers (consecutive bits), so they take part,
   * but cannot prune; they give up within the masked budget (a tenth of a scan, as the planner
   * estimates work), so a masked query that falls back costs at most about 1.1 scans. Twice the
   * budget is allowed here: a shell's real work may exceed its estimate.
   */
  @Test
  void maskedFarQueriesGiveUpTheTablesWithinATenthOfAScan() {
    long seed = Randoms.seed(3);
    CodeBlock flat = SyntheticCodes.uniform(50_000, 256, seed);
    CodeBlock codes = new CodeBlock(io.actindex.core.CodeLayout.parse("a:128,b:128"), flat.size(), flat.words());
    CodeBlock far = SyntheticCodes.uniform(10, 256, seed + 1);
    MihSearcher s = (MihSearcher) Searchers.build(codes, SearchPlanOptions.defaults().plain().withPartition(false), PlannerCosts.defaults());
    long[] mask = codes.layout().mask(1);
    for (int i = 0; i < far.size(); i++) {
      long[] q = far.code(i);
      assertEquals(BruteForce.knn(codes, q, 10, null, mask), s.knn(q, 10, null, mask), Randoms.describe(seed));
      String why = Randoms.describe(seed) + " query " + i;
      assertEquals(1, s.lastQueryWork()[2], why + " should scan");
      assertTrue(s.lastQueryWork()[0] > 0, why + ": no table inside the mask was probed");
      assertTrue(s.lastTableWorkShare() <= 0.2, why + " spent " + s.lastTableWorkShare() + " of a scan in the tables");
    }
  }

  @Test
  void farQueriesOnUniformCodesFallBackToTheScan() {
    long seed = Randoms.seed(2);
    CodeBlock codes = SyntheticCodes.uniform(50_000, 256, seed);
    CodeBlock far = SyntheticCodes.uniform(10, 256, seed + 1);
    // fixed costs: which path is cheapest must not depend on how busy the machine was when it measured its own
    MihSearcher s = (MihSearcher) Searchers.build(codes, SearchPlanOptions.defaults(), PlannerCosts.defaults());
    for (int i = 0; i < far.size(); i++) {
      long[] q = far.code(i);
      // the 10th neighbour of a random 256-bit code is ~90 bits away: no table can prune that
      assertEquals(BruteForce.knn(codes, q, 10, null, null), s.knn(q, 10), Randoms.describe(seed));
      long[] work = s.lastQueryWork();
      assertEquals(1, work[2], Randoms.describe(seed) + " query " + i + " should scan");
      assertTrue(work[1] < 1000, Randoms.describe(seed) + " spent " + work[1] + " candidates before scanning");
    }
  }

  @Test
  void inDistributionReluQueriesPruneWithTheTables() {
    long seed = Randoms.seed(3);
    SyntheticCodes.ReluNet net = new SyntheticCodes.ReluNet(32, 128, 128, 12, seed);
    CodeBlock codes = net.sample(40_000, 0, seed + 1).codes();
    CodeBlock queries = net.sample(20, 0, seed + 2).codes();
    MihSearcher s = (MihSearcher) Searchers.build(codes, SearchPlanOptions.defaults().withStrategy(SearchPlanOptions.Strategy.TABLES));
    long visited = 0;
    for (int i = 0; i < queries.size(); i++) {
      long[] q = queries.code(i);
      assertEquals(BruteForce.knn(codes, q, 10, null, null), s.knn(q, 10), Randoms.describe(seed));
      visited += s.lastQueryWork()[1];
    }
    assertTrue(visited / queries.size() < codes.size() / 4, Randoms.describe(seed) + " mean visited " + visited / queries.size()
        + " of " + codes.size() + "; " + Searchers.stats(s));
  }

  /**
   * The scan's per-code / per-word split from two noisy timings: always adds up to the 4-word time,
   * the per-word share held within its bounds whatever the noise (even a 1-word scan timed slower
   * than the 4-word one), and exact where the timings are consistent.
   */
  @Test
  void scanCostSplitStaysSaneUnderNoise() {
    double[][] timings = {{0.7, 1.6}, {1.7, 1.6}, {0.1, 1.6}, {1.6, 1.6}, {0.05, 3.0}};
    for (double[] t : timings) {
      double[] s = PlannerCosts.splitScan(t[0], t[1]);
      assertEquals(t[1], s[0] + 4 * s[1], 1e-9, "sum for " + t[0] + ", " + t[1]);
      assertTrue(s[1] >= PlannerCosts.MIN_WORD_SHARE * t[1] - 1e-12 && s[1] <= PlannerCosts.MAX_WORD_SHARE * t[1] + 1e-12,
          "share " + s[1] / t[1] + " for " + t[0] + ", " + t[1]);
    }
    double[] consistent = PlannerCosts.splitScan(0.7, 1.6); // the defaults: 0.4 per code + 0.3 per word
    assertEquals(0.4, consistent[0], 1e-9);
    assertEquals(0.3, consistent[1], 1e-9);
  }
}
