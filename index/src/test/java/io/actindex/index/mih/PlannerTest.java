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
    MihSearcher s = (MihSearcher) Searchers.build(codes);
    for (int i = 0; i < 20; i++) {
      long[] q = codes.code(rnd.nextInt(codes.size()));
      q[rnd.nextInt(4)] ^= 1L << rnd.nextInt(64);
      assertEquals(BruteForce.radius(codes, q, 4, null, null), s.radius(q, 4), Randoms.describe(seed));
      long[] work = s.lastQueryWork();
      assertEquals(0, work[2], Randoms.describe(seed) + " radius 4 should not scan");
      assertTrue(work[1] < codes.size() / 100, Randoms.describe(seed) + " visited " + work[1]);
    }
  }

  @Test
  void farQueriesOnUniformCodesFallBackToTheScan() {
    long seed = Randoms.seed(2);
    CodeBlock codes = SyntheticCodes.uniform(50_000, 256, seed);
    CodeBlock far = SyntheticCodes.uniform(10, 256, seed + 1);
    MihSearcher s = (MihSearcher) Searchers.build(codes);
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
}
