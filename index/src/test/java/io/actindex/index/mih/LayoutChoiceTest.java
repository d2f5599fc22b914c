package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The table layout a build keeps (the analysis' L / log2 n tables or fewer, wider ones) does not
 * depend on the planner costs the build measured, so not on how busy the machine was; the counted
 * work it compares is the work of the tables path itself.
 */
class LayoutChoiceTest {
  /**
   * Costs measured on this project's shared 2-core machine by {@code calibrate-planner} (see
   * docs/commands/calibrate-planner.md: one run while two builds ran, one on a quieter machine), the
   * fixed defaults, and the quiet run with its dense probe at the 2.8 and 38 ns that stores built an
   * hour apart held (DEVELOPERS.md, {@code PlannerCosts}). Under the choice by the planner's own
   * estimate priced with the build's costs, skewed ReLU codes of 20k got 5-6 wide tables under some
   * of these and 10-13 narrow ones under others.
   */
  static final List<PlannerCosts> PLAUSIBLE = List.of(
      PlannerCosts.defaults(),
      new PlannerCosts(0.282299, 0.297365, 20.1080, 104.850, 21.2516, 19.0061, 1.91557, 36.6895),
      new PlannerCosts(0.296145, 0.164865, 5.67322, 76.3348, 3.11200, 4.29329, 1.24229, 7.98438),
      new PlannerCosts(0.296145, 0.164865, 2.8, 76.3348, 3.11200, 4.29329, 1.24229, 7.98438),
      new PlannerCosts(0.296145, 0.164865, 38, 76.3348, 3.11200, 4.29329, 1.24229, 7.98438),
      new PlannerCosts(0.141070, 0.258629, 8.62622, 95.4638, 24.9881, 5, 1.52826, 47.2194));

  @Test
  void skewedReluCodesKeepOneLayoutUnderEveryPlausibleCost() {
    for (int i = 0; i < 3; i++) {
      long seed = Randoms.seed(40 + i);
      SyntheticCodes.ReluNet net = new SyntheticCodes.ReluNet(32, 128, 128, 12, seed);
      CodeBlock codes = net.sample(20_000, 0, seed + 1).codes();
      CodeBlock in = net.sample(8, 0, seed + 2).codes(), out = net.sample(8, 3, seed + 3).codes();
      List<Integer> first = null;
      for (PlannerCosts cost : PLAUSIBLE) {
        MihSearcher s = (MihSearcher) Searchers.build(codes, SearchPlanOptions.defaults().withPartition(false), cost);
        List<Integer> widths = Searchers.stats(s).tables().stream().map(SearcherStats.Table::width).toList();
        if (first == null) first = widths;
        assertEquals(first, widths, Randoms.describe(seed) + ": table widths under " + cost);
        for (int q = 0; q < in.size(); q++) {
          assertEquals(BruteForce.knn(codes, in.code(q), 10, null, null), s.knn(in.code(q), 10), Randoms.describe(seed) + " in " + q);
          assertEquals(BruteForce.knn(codes, out.code(q), 10, null, null), s.knn(out.code(q), 10), Randoms.describe(seed) + " out " + q);
        }
      }
    }
  }

  /** What {@code tablesWork} counts is what the tables path does: its probes and candidates, up to the cap. */
  @Test
  void tablesWorkCountsTheTablesPath() {
    long seed = Randoms.seed(43);
    SyntheticCodes.ReluNet net = new SyntheticCodes.ReluNet(32, 128, 128, 12, seed);
    CodeBlock codes = net.sample(20_000, 0, seed + 1).codes();
    CodeBlock queries = net.sample(10, 0, seed + 2).codes().concat(net.sample(10, 2, seed + 3).codes());
    for (int m : new int[] {5, 12}) {
      MihSearcher s = (MihSearcher) Searchers.build(codes,
          SearchPlanOptions.defaults().withPartition(false).withSubstrings(m).withStrategy(SearchPlanOptions.Strategy.TABLES));
      // a probe priced 1, a candidate 1,000: both counts read back from one sum
      PlannerCosts count = new PlannerCosts(1, 1, 1, 1, 1000, 1, 1, 1000);
      for (int q = 0; q < queries.size(); q++) {
        String why = Randoms.describe(seed) + " m " + m + " query " + q;
        long[] code = queries.code(q);
        double work = s.tablesWork(code, 10, count, Double.POSITIVE_INFINITY);
        assertEquals(BruteForce.knn(codes, code, 10, null, null), s.knn(code, 10), why);
        long[] done = s.lastQueryWork();
        assertTrue(done[1] > 0, why);
        assertEquals(done[0] + 1000.0 * done[1], work, why);
        assertEquals(work / 2, s.tablesWork(code, 10, count, work / 2), why + ": not cut at the cap");
      }
    }
  }
}
