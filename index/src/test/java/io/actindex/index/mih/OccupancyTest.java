package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.core.ScanSearcher;
import io.actindex.core.SyntheticCodes;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/** Skew handling: constant bits leave the tables, and the buckets get smaller on ReLU-like codes. */
class OccupancyTest {

  @Test
  void droppingConstantBitsAndBalancingShrinksBuckets() {
    for (int rep = 0; rep < 4; rep++) {
      long seed = Randoms.seed(rep);
      CodeBlock codes = SyntheticCodes.reluLike(20_000, 128, 128, seed).codes();
      SearcherStats before = Searchers.stats(Searchers.build(codes, SearchPlanOptions.defaults().plain()));
      SearcherStats after = Searchers.stats(Searchers.build(codes));
      String why = Randoms.describe(seed) + "\nbefore " + before + "\nafter  " + after;
      assertEquals(0, before.constantBits(), why);
      assertTrue(after.constantBits() > 0, why); // the generator makes dead and always-on neurons
      assertEquals(codes.layout().bits(), after.constantBits() + after.indexedBits(), why);
      assertTrue(after.meanCollisions() < before.meanCollisions(), why);
      assertTrue(after.minKeyEntropy() > before.minKeyEntropy(), why);
    }
  }

  @Test
  void statsCountBitsAndBytes() {
    CodeBlock codes = SyntheticCodes.uniform(4096, 256, Randoms.seed(5));
    SearcherStats s = Searchers.stats(Searchers.build(codes));
    // 256 uniform bits over 4096 codes: nothing constant, m = 256 / log2(4096) = 21 > 16 tables, so the
    // cascade indexes 16 tables of 12 bits
    assertEquals(0, s.constantBits());
    assertEquals(16, s.substrings());
    assertEquals(16 * 12, s.indexedBits());
    assertTrue(s.cascade());
    long ids = 4L * 4096 * 16;
    assertTrue(s.tableBytes() >= ids, s.toString());
    assertEquals(8L * 4096 * 4, s.codeBytes());
  }

  /**
   * What a partition builds on first use is counted at its most, from its size: each code's place
   * (4 bytes) for filtered queries, and for masked ones the radii of every set of layers but all of
   * them (2 bytes per code and 4 per cluster each), at most 8 sets; nothing without a partition.
   */
  @Test
  void statsCountWhatThePartitionBuildsOnFirstUse() {
    long seed = Randoms.seed(6);
    int n = 2 * Partition.MIN_CODES, bits = 120;
    CodeBlock uniform = SyntheticCodes.uniform(n, bits, seed);
    for (int layers = 1; layers <= 5; layers++) {
      List<CodeLayout.Segment> segs = new ArrayList<>();
      for (int l = 0; l < layers; l++) segs.add(new CodeLayout.Segment("l" + l, bits / layers));
      CodeBlock codes = new CodeBlock(new CodeLayout(segs), n, uniform.words());
      String why = Randoms.describe(seed) + ", " + layers + " layers";
      MihSearcher s = (MihSearcher) Searchers.build(codes);
      assertNotNull(s.partition, why);
      long covers = Math.min(8, (1L << layers) - 2); // non-empty sets of layers, all of them excepted
      assertEquals(4L * n + covers * (2L * n + 4L * s.partition.clusters()), Searchers.stats(s).onDemandBytes(), why);
      assertEquals(0, Searchers.stats(Searchers.build(codes, SearchPlanOptions.defaults().withPartition(false))).onDemandBytes(), why);
    }
    assertEquals(0, Searchers.stats(new ScanSearcher(uniform)).onDemandBytes());
  }
}
