package io.actindex.bench;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hits;
import io.actindex.core.ScanSearcher;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.mih.Searchers;
import java.lang.reflect.Method;
import java.util.TreeSet;
import java.util.function.IntPredicate;
import org.junit.jupiter.api.Test;

class MaskedWorstBenchTest extends TempBenchCache {
  /** The benchmark's own setup on small sets of its seed: it checks every query and throws on a difference. */
  @Test
  void setupPassesOnSmallSets() {
    for (String data : new String[] {"relu", "dense"})
      for (String queries : new String[] {"in", "ood"})
        for (int k : new int[] {1, 10}) {
          MaskedWorstBench b = new MaskedWorstBench();
          b.data = data;
          b.n = 20_000;
          b.bits = 64;
          b.queries = queries;
          b.k = k;
          b.mask = "second";
          b.searcher = "both";
          b.setup();
        }
  }

  /**
   * Planner against masked scan on skewed codes of other seeds (both layers, k = 1 and 10, in and
   * out of distribution): the check the setup runs passes, and the sets take more than one of the
   * planner's paths, so it is not only the head's answer that is compared.
   */
  @Test
  void plannerEqualsMaskedScanOverSeeds() throws Exception {
    TreeSet<Long> paths = new TreeSet<>();
    for (long seed = 1; seed <= 5; seed++)
      for (int bits : new int[] {64, 128}) {
        SyntheticCodes.ReluNet net = BenchData.net("relu", bits, seed);
        CodeBlock codes = net.sample(30_000, 0, seed * 31).codes();
        CodeSearcher planner = Searchers.build(codes);
        ScanSearcher scan = new ScanSearcher(codes);
        Method work = planner.getClass().getDeclaredMethod("lastQueryWork");
        work.setAccessible(true);
        for (double shift : new double[] {0, BenchData.OOD_SHIFT}) {
          long[][] set = new BenchData.Queries(net.sample(64, shift, seed * 31 + 7).codes(), null).codeArrays();
          for (int layer = 0; layer < 2; layer++)
            for (int k : new int[] {1, 10}) {
              long[] mask = codes.layout().mask(layer);
              MaskedWorstBench.requireSame(planner, scan, set, k, mask, "seed " + seed + " bits " + bits + " shift " + shift + " layer " + layer + " k " + k);
              for (long[] q : set) {
                planner.knn(q, k, null, mask);
                paths.add(((long[]) work.invoke(planner))[3]);
              }
            }
        }
      }
    assertThat(paths).as("paths taken (1 scan, 2 tables, 3 partition, 4 head)").contains(4L).containsAnyOf(1L, 2L, 3L);
  }

  /** A searcher that answers one query wrong is caught, and the message names the query and the set. */
  @Test
  void aWrongAnswerIsCaught() {
    CodeBlock codes = BenchData.net("relu", 64, 3).sample(5_000, 0, 3).codes();
    ScanSearcher scan = new ScanSearcher(codes);
    long[][] set = new BenchData.Queries(BenchData.net("relu", 64, 3).sample(8, 0, 4).codes(), null).codeArrays();
    CodeSearcher wrongOnFifth = new CodeSearcher() {
      @Override
      public CodeLayout layout() {
        return scan.layout();
      }

      @Override
      public int size() {
        return scan.size();
      }

      @Override
      public Hits knn(long[] query, int k, IntPredicate accept, long[] mask) {
        return query == set[5] ? scan.knn(query, k + 1, accept, mask) : scan.knn(query, k, accept, mask);
      }

      @Override
      public Hits radius(long[] query, int radius, IntPredicate accept, long[] mask) {
        return scan.radius(query, radius, accept, mask);
      }
    };
    long[] mask = codes.layout().mask(1);
    MaskedWorstBench.requireSame(scan, scan, set, 1, mask, "itself");
    assertThatThrownBy(() -> MaskedWorstBench.requireSame(wrongOnFifth, scan, set, 1, mask, "set X"))
        .isInstanceOf(IllegalStateException.class).hasMessageContaining("query 5 of set X");
  }
}
