package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Hits;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.nio.file.Path;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * {@link IndexReader#knnWithTies} against the bit-by-bit brute force: the k-th distance from
 * {@code BruteForce.knn}, then every live code within it from {@code BruteForce.radius}; uniform and
 * ReLU-like codes, several segments, deletes, filters, masks, k from 1 to beyond the live count.
 */
class KnnWithTiesTest {
  @TempDir Path tmp;

  @Test
  void equalsBruteForce() {
    for (int t = 0; t < 16; t++) {
      long seed = Randoms.seed(t);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeBlock codes = t % 2 == 0 ? SyntheticCodes.reluLike(300, 30 + rnd.nextInt(60), 10 + rnd.nextInt(40), seed).codes()
          : SyntheticCodes.uniform(300, 1 + rnd.nextInt(200), seed);
      Path dir = tmp.resolve("i" + t);
      RoaringBitmap deleted = new RoaringBitmap();
      for (int i = 0; i < 30; i++) deleted.add(rnd.nextInt(300));
      try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
        w.add(codes.slice(0, 100), null);
        w.add(codes.slice(100, 230), null);
        w.add(codes.slice(230, 300), null);
        w.delete(deleted);
      }
      try (IndexReader r = IndexReader.open(dir)) {
        for (int q = 0; q < 20; q++) {
          long[] query = SyntheticCodes.uniform(1, codes.layout().bits(), seed + q).code(0);
          if (q % 2 == 0) query = codes.code(rnd.nextInt(300));
          int k = new int[] {1, 5, 40, 260, 400}[q % 5];
          RoaringBitmap filter = q % 3 == 0 ? null : RoaringBitmap.bitmapOf(rnd.ints(150, 0, 300).toArray());
          long[] mask = q % 4 == 1 ? CodeLayout.single("x", codes.layout().bits()).mask(0) : null;
          if (q % 4 == 3 && codes.layout().segments().size() > 1) mask = codes.layout().mask(1);
          RoaringBitmap f = filter;
          long[] m = mask;
          java.util.function.IntPredicate accept = id -> !deleted.contains(id) && (f == null || f.contains(id));
          Hits top = BruteForce.knn(codes, query, k, accept, m);
          Hits want = top.size() == 0 ? top : BruteForce.radius(codes, query, top.dist(top.size() - 1), accept, m);
          assertEquals(want, r.knnWithTies(query, k, filter, mask), Randoms.describe(seed) + " query " + q + " k " + k);
        }
      }
    }
  }
}
