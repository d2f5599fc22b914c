package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.lang.management.ManagementFactory;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.Locale;

/**
 * What the deleted-share rewrite buys a query, paired per query: the same 1M codes with the same
 * {@code deleted}% deleted (30 by default), once as the old leftover (one segment keeping its
 * deleted codes: {@link RealUseBench}'s {@code deletedP} store) and once rewritten without them (a
 * copy of the clean store, the same delete, which under the default merge policy rewrites the
 * segment past a quarter deleted, then a compaction for a share below that). Each
 * query runs through both in turn, rotating which goes first, {@code rounds} times after a round
 * that checks they answer alike; a query's time is its best round. Ratios: summed per-query times
 * and the median of the per-query ratios, rewritten over leftover, measured in the same minutes.
 *
 * <p>Run: {@code java -Xmx8g -cp bench/target/benchmarks.jar -Dactindex.bench.data=DIR
 * io.actindex.bench.DeletedPaired [data=relu,dense] [queries=in,ood] [rounds=5] [count=512] [k=10] [deleted=30]}.
 */
public final class DeletedPaired {
  private DeletedPaired() {}

  public static void main(String[] args) throws IOException {
    String[] data = WorstCaseSweep.arg(args, "data", "relu,dense").split(","), kinds = WorstCaseSweep.arg(args, "queries", "in,ood").split(",");
    int n = 1_000_000, bits = 256, rounds = Integer.parseInt(WorstCaseSweep.arg(args, "rounds", "5")),
        count = Integer.parseInt(WorstCaseSweep.arg(args, "count", "512")), k = Integer.parseInt(WorstCaseSweep.arg(args, "k", "10")),
        pct = Integer.parseInt(WorstCaseSweep.arg(args, "deleted", "30"));
    System.out.println("| data | queries | leftover µs | rewritten µs | rewritten / leftover (sum, median per query) | stored: leftover, rewritten | load |");
    System.out.println("|---|---|---:|---:|---:|---|---:|");
    for (String d : data) {
      CodeBlock codes = BenchData.codes(d, n, bits);
      Path rewritten = BenchData.dir().resolve("deleted" + pct + "-rewritten-" + d);
      SegmentsPaired.copy(RealUseBench.store(d, codes, 1, null), rewritten);
      try (IndexWriter w = IndexWriter.open(rewritten)) { // the default policy: past a quarter, the delete rewrites the segment
        w.delete(RealUseBench.randomIds(n, pct / 100.0, 0xDE1E7EL));
        w.compact(); // nothing left to do unless below a quarter
      }
      IndexReader[] r = {IndexReader.open(RealUseBench.store(d, codes, 1, "deleted" + pct)), IndexReader.open(rewritten)};
      try {
        for (String kind : kinds) {
          long[][] qs = Arrays.copyOf(BenchData.queries(d, kind, n, bits).codeArrays(), count);
          double[][] best = new double[2][qs.length];
          for (double[] b : best) Arrays.fill(b, Double.MAX_VALUE);
          for (int round = 0; round <= rounds; round++)
            for (int i = 0; i < qs.length; i++)
              for (int j = 0; j < 2; j++) {
                int p = (j + round + i) % 2;
                long t0 = System.nanoTime();
                Hits h = r[p].search(qs[i], k, null, null);
                double us = (System.nanoTime() - t0) / 1e3;
                if (round > 0) best[p][i] = Math.min(best[p][i], us);
                else if (p == 1 && !h.equals(r[0].search(qs[i], k, null, null)))
                  throw new AssertionError(d + " " + kind + " query " + i + ": the rewritten index answers differently");
              }
          double old = SegmentsPaired.sum(best[0]), now = SegmentsPaired.sum(best[1]);
          System.out.printf(Locale.ROOT, "| %s | %s | %.1f | %.1f | %.2f×, %.2f× | %s, %s | %.1f |%n", d, kind, old / qs.length,
              now / qs.length, now / old, SegmentsPaired.medianRatio(best[1], best[0]), stored(r[0]), stored(r[1]),
              ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage());
        }
      } finally {
        for (IndexReader x : r) x.close();
        RealUseBench.delete(rewritten);
      }
    }
  }

  private static String stored(IndexReader r) {
    return r.info().segments().stream().map(s -> s.count() + " (" + s.deleted() + " deleted)")
        .collect(java.util.stream.Collectors.joining(" + "));
  }
}
