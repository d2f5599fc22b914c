package io.actindex.cluster;

import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import org.apache.spark.api.java.JavaPairRDD;
import org.apache.spark.storage.StorageLevel;
import scala.Tuple2;

/**
 * Connected components of an edge list on the engine, by the alternating Large-Star / Small-Star
 * algorithm of Kiveris, Lattanzi, Mirrokni, Rastogi & Vassilvitskii, "Connected Components in
 * MapReduce and Beyond" (SoCC 2014, sec. 3): O(log^2 n) rounds, each a few shuffles, no node's
 * neighbourhood held anywhere but in its own reducer.
 *
 * <p>Edges are kept as (child, parent) with {@code child > parent}. The loop stops when the edges
 * form stars: every child has one parent and no parent is a child. Then each star is one
 * component and its centre is the component's smallest id.
 */
final class Components {
  private Components() {}

  /** {@code members}: (node, root) for every node that has an edge; {@code rounds} of the loop. */
  record Result(JavaPairRDD<Long, Long> members, int rounds) {}

  /** The components; a root is the smallest id of its component and is listed as (root, root). */
  static Result of(JavaPairRDD<Long, Long> edges, int partitions) {
    JavaPairRDD<Long, Long> e = edges.mapToPair(t -> t._1 > t._2 ? t : t.swap());
    int rounds = 0;
    while (true) {
      rounds++;
      JavaPairRDD<Long, Long> next = smallStar(largeStar(e, partitions), partitions).persist(StorageLevel.MEMORY_AND_DISK());
      if (e != edges) e.unpersist(false);
      e = next;
      if (stars(e, partitions)) break;
    }
    JavaPairRDD<Long, Long> roots = e.values().distinct(partitions).mapToPair(r -> new Tuple2<>(r, r));
    return new Result(e.distinct(partitions).union(roots), rounds);
  }

  /** Each node u links every larger neighbour to the smallest of u and its neighbours. */
  static JavaPairRDD<Long, Long> largeStar(JavaPairRDD<Long, Long> e, int partitions) {
    return e.flatMapToPair(t -> List.of(t, t.swap()).iterator()).groupByKey(partitions).flatMapToPair(g -> {
      long u = g._1;
      long[] nb = unique(g._2);
      long min = Math.min(u, nb[0]);
      List<Tuple2<Long, Long>> out = new ArrayList<>();
      for (long v : nb) if (v > u) out.add(new Tuple2<>(v, min));
      return out.iterator();
    });
  }

  /** Each node u links itself and its smaller neighbours to the smallest of them. */
  static JavaPairRDD<Long, Long> smallStar(JavaPairRDD<Long, Long> e, int partitions) {
    return e.groupByKey(partitions).flatMapToPair(g -> {
      long u = g._1;
      long[] nb = unique(g._2); // all smaller than u
      long min = nb[0];
      List<Tuple2<Long, Long>> out = new ArrayList<>();
      for (long v : nb) if (v != min) out.add(new Tuple2<>(v, min));
      out.add(new Tuple2<>(u, min));
      return out.iterator();
    });
  }

  /** True when every child has exactly one parent and no parent is itself a child. */
  static boolean stars(JavaPairRDD<Long, Long> e, int partitions) {
    // per node: {smallest parent, largest parent, 1 if it is some edge's parent}
    return e.flatMapToPair(t -> List.of(new Tuple2<>(t._1, new long[] {t._2, t._2, 0}),
            new Tuple2<>(t._2, new long[] {Long.MAX_VALUE, Long.MIN_VALUE, 1})).iterator())
        .reduceByKey((a, b) -> new long[] {Math.min(a[0], b[0]), Math.max(a[1], b[1]), a[2] | b[2]}, partitions)
        .filter(t -> t._2[0] != Long.MAX_VALUE && (t._2[0] != t._2[1] || t._2[2] == 1))
        .isEmpty();
  }

  private static long[] unique(Iterable<Long> values) {
    long[] a = new long[16];
    int n = 0;
    for (long v : values) {
      if (n == a.length) a = Arrays.copyOf(a, n * 2);
      a[n++] = v;
    }
    Arrays.sort(a, 0, n);
    int k = 0;
    for (int i = 0; i < n; i++) if (k == 0 || a[k - 1] != a[i]) a[k++] = a[i];
    return Arrays.copyOf(a, k);
  }
}
