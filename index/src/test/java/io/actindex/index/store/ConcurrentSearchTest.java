package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.concurrent.CyclicBarrier;
import java.util.concurrent.atomic.AtomicInteger;
import java.util.concurrent.atomic.AtomicReference;
import java.util.function.IntPredicate;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * One open index searched by several threads at once (what {@code nearest --threads}, {@code dupes}
 * and a server embedding the library do) answers every query as the brute force over its live codes
 * does: the searchers keep per-thread scratch state (the joint walk's cluster order, the partition's
 * visit marks, the tables' probe state), which must never leak between threads. Three segments large
 * enough for partitions and hash tables, one of skewed codes' shape, deletions; each thread draws its
 * own mix of masked and unmasked queries, filters walked and scanned, k and radius queries.
 */
class ConcurrentSearchTest {
  @TempDir Path tmp;

  @Test
  void threadsSharingOneReaderGetTheBruteForceAnswers() throws Exception {
    long seed = Randoms.seed(900);
    String why = Randoms.describe(seed);
    SplittableRandom rnd = new SplittableRandom(seed);
    SyntheticCodes.ReluNet net = SyntheticCodes.ReluNet.dense(32, 64, 64, 20, seed);
    CodeBlock all = net.sample(3_000 + 6_000 + 4_000, 0, seed + 1).codes();
    Path dir = tmp.resolve("idx");
    RoaringBitmap deleted = new RoaringBitmap();
    for (int i = 0; i < all.size(); i++) if (rnd.nextInt(50) == 0) deleted.add(i);
    try (IndexWriter w = IndexWriter.create(dir, all.layout(), Map.of())) {
      w.add(all.slice(0, 3_000), null);
      w.add(all.slice(3_000, 9_000), null);
      w.add(all.slice(9_000, all.size()), null);
      w.delete(deleted.toArray());
    }
    int threads = 4, perThread = 60;
    CodeBlock queries = net.sample(threads * perThread, 0, seed + 2).codes();
    CodeBlock far = net.sample(threads * perThread, 3, seed + 3).codes();
    try (IndexReader r = IndexReader.open(dir)) {
      assertTrue(r.info().segments().size() >= 2, why + ": " + r.info().segments().size() + " segments");
      double[] shares = {0.003, 0.05, 0.4};
      List<RoaringBitmap> filters = new ArrayList<>();
      List<IdSet> sets = new ArrayList<>();
      for (double share : shares) {
        RoaringBitmap f = new RoaringBitmap();
        for (int id = 0; id < all.size(); id++) if (rnd.nextDouble() < share) f.add(id);
        filters.add(f);
        sets.add(r.filter(f.toArray()));
      }
      CyclicBarrier start = new CyclicBarrier(threads);
      AtomicReference<Throwable> failure = new AtomicReference<>();
      AtomicInteger checked = new AtomicInteger();
      List<Thread> pool = new ArrayList<>();
      for (int t = 0; t < threads; t++) {
        int thread = t;
        Thread th = new Thread(() -> {
          try {
            SplittableRandom local = new SplittableRandom(seed + 10 + thread);
            start.await();
            for (int i = 0; i < perThread && failure.get() == null; i++) {
              int qi = thread * perThread + i;
              long[] q = local.nextBoolean() ? queries.code(qi) : far.code(qi);
              int f = local.nextInt(shares.length + 1); // shares.length: no filter
              RoaringBitmap keep = f == shares.length ? null : filters.get(f);
              IdSet filter = keep == null ? null : sets.get(f);
              long[] mask = local.nextInt(4) == 0 ? all.layout().mask(local.nextInt(2)) : null;
              IntPredicate accept = id -> !deleted.contains(id) && (keep == null || keep.contains(id));
              int k = new int[] {1, 10, 100}[local.nextInt(3)];
              String what = why + " thread " + thread + " query " + i + " filter " + f + " k=" + k + (mask == null ? "" : " masked");
              assertEquals(BruteForce.knn(all, q, k, accept, mask), r.search(q, k, filter, mask), what);
              if (i % 5 == 0) assertEquals(BruteForce.radius(all, q, 20, accept, mask), r.searchRadius(q, 20, filter, mask), what + " radius 20");
              checked.incrementAndGet();
            }
          } catch (Throwable e) {
            failure.compareAndSet(null, e);
          }
        });
        pool.add(th);
        th.start();
      }
      for (Thread th : pool) th.join();
      if (failure.get() != null) throw new AssertionError(why + ": a searching thread failed", failure.get());
      assertEquals(threads * perThread, checked.get(), why);
      Hits none = r.search(queries.code(0), 10, r.filter(), null);
      assertEquals(Hits.EMPTY, none, why);
    }
  }
}
