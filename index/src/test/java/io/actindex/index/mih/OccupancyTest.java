package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
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
}
