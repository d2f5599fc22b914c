package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.AdversarialCodes;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.core.PopcountReference;
import io.actindex.core.Randoms;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.function.IntUnaryOperator;
import org.junit.jupiter.api.Test;

/**
 * One searcher and one joint search shared by several threads, each running the same queries in
 * its own order: masks of many different sets of layers (more than the partition keeps radii for,
 * so its cache of cover radii is cleared and rebuilt while other threads read), filters, k; the
 * planner costs send masked queries to the partition. Every answer against {@link
 * PopcountReference} (an independent {@code Long.bitCount} loop; Hamming 1950). A search path with
 * shared mutable state (per-thread scratch, the partition's cover radii) would answer wrongly or
 * throw here.
 */
class SharedPartitionThreadsTest {

  private record Task(long[] q, long[] mask, int k, IdSet accept, Hits expected, String what) {}

  @Test
  void threadsSharingSearchersAnswerExactly() throws Exception {
    long seed = Randoms.seed(0);
    SplittableRandom rnd = new SplittableRandom(seed);
    List<CodeLayout.Segment> segs = new ArrayList<>();
    for (int i = 0; i < 6; i++) segs.add(new CodeLayout.Segment("l" + i, 20 + rnd.nextInt(40)));
    CodeLayout layout = new CodeLayout(segs);
    int n = 3000;
    CodeBlock all = AdversarialCodes.codes("oneCluster", layout, n / 2, rnd).concat(AdversarialCodes.codes("uniform", layout, n - n / 2, rnd));
    // one block with a partition of small clusters that the planner prefers, and three blocks searched jointly
    CodeSearcher one = ((MihSearcher) Searchers.build(all, SearchPlanOptions.defaults(), AdversarialSearchTest.COSTS.get("partitionCheap")))
        .withPartition(Partition.build(all, 2, 40));
    int[] cut = {0, 1000, 2200, n};
    List<CodeSearcher> blocks = new ArrayList<>();
    List<IntUnaryOperator> idOf = new ArrayList<>();
    for (int b = 0; b < 3; b++) {
      CodeBlock block = all.slice(cut[b], cut[b + 1]);
      blocks.add(((MihSearcher) Searchers.build(block, SearchPlanOptions.defaults(), AdversarialSearchTest.COSTS.get("partitionCheap")))
          .withPartition(Partition.build(block, 2, 30 + 10 * b)));
      int first = cut[b];
      idOf.add(o -> first + o);
    }
    JointSearch joint = new JointSearch(layout, blocks, idOf);

    List<Task> tasks = new ArrayList<>();
    for (int t = 0; t < 240; t++) {
      long[] q = AdversarialCodes.query(all, rnd);
      int layers = 1 + rnd.nextInt((1 << segs.size()) - 1); // a non-empty set of layers
      int[] chosen = java.util.stream.IntStream.range(0, segs.size()).filter(s -> (layers >>> s & 1) != 0).toArray();
      long[] mask = t % 4 == 0 ? null : layout.mask(chosen);
      int k = 1 + rnd.nextInt(t % 3 == 0 ? 200 : 12);
      IdSet accept = t % 5 == 0 ? (IdSet) AdversarialCodes.filter(rnd.nextBoolean() ? "sparse" : "half", n, rnd) : null;
      tasks.add(new Task(q, mask, k, accept, PopcountReference.knn(all, q, k, accept, mask),
          Randoms.describe(seed) + " task " + t + " layers=" + Integer.toBinaryString(layers) + " k=" + k));
    }
    int threads = 4;
    ExecutorService pool = Executors.newFixedThreadPool(threads);
    try {
      List<Future<?>> running = new ArrayList<>();
      for (int th = 0; th < threads; th++) {
        int[] order = Randoms.permutation(tasks.size(), new SplittableRandom(seed + th));
        running.add(pool.submit(() -> {
          for (int round = 0; round < 3; round++)
            for (int i : order) {
              Task t = tasks.get(i);
              assertEquals(t.expected, one.knn(t.q, t.k, t.accept, t.mask), t.what + " (one block)");
              IdSet acc = t.accept;
              assertEquals(t.expected, joint.knn(t.q, t.k, acc, b -> acc == null ? null : acc.window(cut[b], cut[b + 1] - cut[b]), t.mask),
                  t.what + " (joint)");
            }
          return null;
        }));
      }
      for (Future<?> f : running) f.get();
    } finally {
      pool.shutdownNow();
    }
  }
}
