package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.lang.management.ManagementFactory;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.Locale;
import java.util.Map;

/**
 * Many segments and one tombstone against one clean segment, paired per query (issue 9: "one
 * tombstone and ten segments at most 1.1x and 1.3x of the clean single segment"): the same 1M codes
 * as one segment, as ten segments of 100k kept apart (the stores {@link RealUseBench} caches), as
 * {@code adds} equal adds (10 by default) under the default merge policy (what a user who adds that
 * many batches gets; built here once and cached; a comment line gives the segments it left) and as the one segment with one id deleted ({@link RealUseBench}'s {@code tomb1}
 * store: a copy of the clean one, then the delete), and once more as a pair on the same files: a fresh
 * copy of the clean store opened, then one id deleted in it and opened again, so that the tombstone's
 * reader and its clean reader map the same segment files (a second store's own pages cost 0-4% on
 * their own, docs/benchmarks.md "One tombstone, paired per query"). Each query runs through the six indexes in turn,
 * rotating which goes first, {@code rounds} times after a round that checks they answer alike; a
 * query's time is its best round. Ratios: summed per-query times, and the median of the per-query
 * ratios, over the single segment's, all measured in the same minutes.
 *
 * <p>Run: {@code java -Xmx8g -cp bench/target/benchmarks.jar -Dactindex.bench.data=DIR
 * io.actindex.bench.SegmentsPaired [data=relu,dense] [queries=in,ood] [rounds=5] [count=512] [k=10] [adds=10]}.
 */
public final class SegmentsPaired {
  private SegmentsPaired() {}

  public static void main(String[] args) {
    String[] data = WorstCaseSweep.arg(args, "data", "relu,dense").split(","), kinds = WorstCaseSweep.arg(args, "queries", "in,ood").split(",");
    int n = 1_000_000, bits = 256, rounds = Integer.parseInt(WorstCaseSweep.arg(args, "rounds", "5")),
        count = Integer.parseInt(WorstCaseSweep.arg(args, "count", "512")), k = Integer.parseInt(WorstCaseSweep.arg(args, "k", "10")),
        adds = Integer.parseInt(WorstCaseSweep.arg(args, "adds", "10"));
    System.out.println("| data | queries | one segment µs | ten kept apart µs | / one (sum, median per query) | " + adds + " adds, default policy µs | segments | / one (sum, median per query) | load | one tombstone µs | / one (sum, median per query) | same files: clean µs | one tombstone µs | / clean (sum, median per query) |");
    System.out.println("|---|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|");
    for (String d : data) {
      CodeBlock codes = BenchData.codes(d, n, bits);
      int deleted = n / 2; // the tombstone's id (RealUseBench.store)
      Path pair = BenchData.dir().resolve("paired-tomb1-" + d);
      IndexReader[] r = {IndexReader.open(RealUseBench.store(d, codes, 1, null)), IndexReader.open(RealUseBench.store(d, codes, 10, null)),
        IndexReader.open(defaultPolicy(d, codes, adds)), IndexReader.open(RealUseBench.store(d, codes, 1, "tomb1")),
        IndexReader.open(copy(RealUseBench.store(d, codes, 1, null), pair)), null};
      r[5] = deleteOne(pair, deleted);
      long[] live = new long[(n + 63) >>> 6];
      Arrays.fill(live, -1L);
      live[deleted >>> 6] &= ~(1L << (deleted & 63));
      if ((n & 63) != 0) live[live.length - 1] &= (1L << (n & 63)) - 1;
      IdSet clean = IdSet.of(live, n); // the clean segment's answer less the deleted id is the tombstone's
      System.out.println("<!-- " + d + ", " + adds + " adds under the default policy leave segments of " + r[2].info().segments().stream()
          .map(s -> Integer.toString(s.count() - s.deleted())).collect(java.util.stream.Collectors.joining(", ")) + " live codes -->");
      try {
        for (String kind : kinds) {
          long[][] qs = Arrays.copyOf(BenchData.queries(d, kind, n, bits).codeArrays(), count);
          double[][] best = new double[r.length][qs.length];
          for (double[] b : best) Arrays.fill(b, Double.MAX_VALUE);
          for (int round = 0; round <= rounds; round++)
            for (int i = 0; i < qs.length; i++)
              for (int j = 0; j < r.length; j++) {
                int p = (j + round + i) % r.length;
                long t0 = System.nanoTime();
                Hits h = r[p].search(qs[i], k, null, null);
                double us = (System.nanoTime() - t0) / 1e3;
                if (round > 0) best[p][i] = Math.min(best[p][i], us);
                else if (p > 0 && !h.equals(r[0].search(qs[i], k, p == 3 || p == 5 ? clean : null, null)))
                  throw new AssertionError(d + " " + kind + " query " + i + ": index " + p + " answers differently");
              }
          double one = sum(best[0]);
          System.out.printf(Locale.ROOT, "| %s | %s | %.1f | %.1f | %.2f×, %.2f× | %.1f | %d | %.2f×, %.2f× | %.1f | %.1f | %.2f×, %.2f× | %.1f | %.1f | %.2f×, %.2f× |%n", d, kind,
              one / qs.length, sum(best[1]) / qs.length, sum(best[1]) / one, medianRatio(best[1], best[0]), sum(best[2]) / qs.length,
              r[2].info().segments().size(), sum(best[2]) / one, medianRatio(best[2], best[0]),
              ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage(), sum(best[3]) / qs.length, sum(best[3]) / one,
              medianRatio(best[3], best[0]), sum(best[4]) / qs.length, sum(best[5]) / qs.length, sum(best[5]) / sum(best[4]),
              medianRatio(best[5], best[4]));
        }
      } finally {
        for (IndexReader x : r) x.close();
        try {
          RealUseBench.delete(pair);
        } catch (IOException e) {
          throw new UncheckedIOException(e);
        }
      }
    }
  }

  /** The codes added in {@code batches} batches under the default merge policy (cached in the bench data folder). */
  static synchronized Path defaultPolicy(String data, CodeBlock codes, int batches) {
    String name = "default-policy-" + data + "-n" + codes.size() + "-b" + codes.layout().bits() + "-a" + batches;
    Path dir = BenchData.dir().resolve(name), done = dir.resolveSibling(name + ".done");
    if (Files.exists(done)) return dir;
    try {
      RealUseBench.delete(dir);
      int n = codes.size();
      try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
        for (int b = 0; b < batches; b++) w.add(codes.slice((int) ((long) b * n / batches), (int) ((long) (b + 1) * n / batches)), null);
      }
      Files.writeString(done, "");
      return dir;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /** A fresh byte copy of the store {@code from} at {@code to}. */
  static Path copy(Path from, Path to) {
    try (java.util.stream.Stream<Path> s = Files.walk(from)) {
      RealUseBench.delete(to);
      for (Path p : s.toList()) Files.copy(p, to.resolve(from.relativize(p).toString()));
      return to;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /**
   * Deletes {@code id} in the store at {@code dir} and opens it: a reader opened before keeps the
   * clean generation, and both map the same segment files (the delete writes a tombstone file and a
   * manifest, no segment: checked here by the segment files' sizes and times).
   */
  private static IndexReader deleteOne(Path dir, int id) {
    Map<Path, String> before = segmentFiles(dir);
    try (IndexWriter w = IndexWriter.open(dir)) {
      w.delete(new int[] {id});
    }
    if (!segmentFiles(dir).equals(before)) throw new IllegalStateException(dir + ": the delete rewrote a segment file");
    return IndexReader.open(dir);
  }

  /** The segment files of a store, each with its size and modification time. */
  private static Map<Path, String> segmentFiles(Path dir) {
    try (java.util.stream.Stream<Path> s = Files.list(dir)) {
      Map<Path, String> files = new java.util.TreeMap<>();
      for (Path p : s.filter(p -> p.getFileName().toString().startsWith("seg-")).toList())
        files.put(p, Files.size(p) + " " + Files.getLastModifiedTime(p));
      return files;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  static double medianRatio(double[] a, double[] b) {
    double[] r = new double[a.length];
    for (int i = 0; i < a.length; i++) r[i] = a[i] / b[i];
    Arrays.sort(r);
    return r[r.length / 2];
  }

  static double sum(double[] a) {
    return Arrays.stream(a).sum();
  }
}
