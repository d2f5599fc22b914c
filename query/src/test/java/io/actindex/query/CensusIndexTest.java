package io.actindex.query;

import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import java.util.HashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/** Census over an index counts live examples only, and reads labels and keys from the metadata store. */
class CensusIndexTest {
  @TempDir Path tmp;

  @Test
  void liveExamplesOnly() {
    long seed = Randoms.seed(5);
    SplittableRandom rnd = new SplittableRandom(seed);
    SyntheticCodes.Sample s = SyntheticCodes.reluLike(300, 12, 8, seed);
    CodeBlock codes = s.codes();
    List<Map<String, String>> meta = TestIndexes.rows(0, 300, rnd);
    TestIndexes.write(tmp.resolve("c"), codes, meta, 2);
    RoaringBitmap deleted = RoaringBitmap.bitmapOf(0, 1, 2, 50, 299);
    try (IndexWriter w = IndexWriter.open(tmp.resolve("c"))) {
      w.delete(deleted.toArray());
    }
    try (IndexReader r = IndexReader.open(tmp.resolve("c"))) {
      Census.Result c = Census.run(r, new Census.Params(null, 5, 2));
      assertEquals(295, c.examples());
      Set<String> regions = new HashSet<>();
      for (int i = 0; i < 300; i++) if (!deleted.contains(i)) regions.add(CensusTest.bits(codes, i, 0, 20));
      assertEquals(regions.size(), c.prefixes().get(1).regions(), Randoms.describe(seed));
      // the largest region's keys are keys of live examples in that region, smallest id first
      Census.Big big = c.prefixes().get(1).largest().get(0);
      int first = Integer.parseInt(big.keys().get(0).substring(1));
      assertEquals(false, deleted.contains(first));
      int members = 0;
      for (int i = 0; i < 300; i++)
        if (!deleted.contains(i) && CensusTest.bits(codes, i, 0, 20).equals(CensusTest.bits(codes, first, 0, 20))) {
          if (members == 0) assertEquals(first, i);
          members++;
        }
      assertEquals(members, big.count());
      int labelled = 0;
      for (int n : big.labels().values()) labelled += n;
      int want = 0;
      for (int i = 0; i < 300; i++)
        if (!deleted.contains(i) && meta.get(i).get("label") != null
            && CensusTest.bits(codes, i, 0, 20).equals(CensusTest.bits(codes, first, 0, 20))) want++;
      assertEquals(want, labelled);
    }
  }
}
