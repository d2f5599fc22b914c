package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hits;
import io.actindex.core.ScanSearcher;
import io.actindex.index.mih.SearchPlanOptions;
import io.actindex.index.mih.Searchers;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Comparator;
import java.util.Map;
import java.util.function.IntPredicate;
import java.util.stream.Stream;

/**
 * The actindex search paths under test, by name:
 * <ul>
 *   <li>{@code scan}: the plain popcount scan ({@link ScanSearcher});
 *   <li>{@code planner}: {@link Searchers#build} with its defaults (multi-index tables, cascade
 *       when the table cap binds, per-query choice of tables or scan);
 *   <li>{@code mih}: multi-index hashing over all non-constant bits, tables always probed;
 *   <li>{@code cascade}: tables over the most informative bits only ({@value #CASCADE_TABLES}
 *       tables), the rest checked on the full codes, tables always probed;
 *   <li>{@code store}: the on-disk index ({@link IndexReader#search}), built once and cached in the
 *       bench data folder, as an application opens it.
 * </ul>
 */
final class CodeContenders {
  private CodeContenders() {}

  static final String SCAN = "scan";
  static final int CASCADE_TABLES = 4;

  /** A searcher and what it holds in memory besides the packed codes. */
  record Built(CodeSearcher searcher, long extraBytes, double diskBytesPerExample) {}

  static Built build(String name, CodeBlock codes, String data) {
    SearchPlanOptions d = SearchPlanOptions.defaults();
    return switch (name) {
      case SCAN -> new Built(new ScanSearcher(codes), 0, Double.NaN);
      case "planner" -> tables(Searchers.build(codes), storeBytes(data, codes));
      case "mih" -> tables(Searchers.build(codes, d.withMaxSubstrings(SearchPlanOptions.MAX_SUBSTRING_BITS * 8)
          .withStrategy(SearchPlanOptions.Strategy.TABLES)), Double.NaN);
      case "cascade" -> tables(Searchers.build(codes, d.withMaxSubstrings(CASCADE_TABLES)
          .withStrategy(SearchPlanOptions.Strategy.TABLES)), Double.NaN);
      case "store" -> store(data, codes);
      default -> throw new IllegalArgumentException("unknown searcher " + name);
    };
  }

  private static Built tables(CodeSearcher s, double disk) {
    System.out.println("# searcher: " + Searchers.stats(s));
    return new Built(s, Searchers.stats(s).tableBytes(), disk);
  }

  private static Built store(String data, CodeBlock codes) {
    IndexReader r = IndexReader.open(storeDir(data, codes));
    long segBytes = r.info().segments().stream().mapToLong(io.actindex.index.store.IndexInfo.SegmentInfo::bytes).sum();
    double disk = (double) r.info().bytesOnDisk() / codes.size();
    System.out.println("# store: " + r.info().segments());
    return new Built(new ReaderSearcher(r), segBytes - 8L * codes.words().length, disk);
  }

  /** Bytes per example of the on-disk index of these codes (codes, tables, metadata store). */
  static double storeBytes(String data, CodeBlock codes) {
    try (IndexReader r = IndexReader.open(storeDir(data, codes))) {
      return (double) r.info().bytesOnDisk() / codes.size();
    }
  }

  /** The cached on-disk index of a data set, written (default metadata: generated keys) when absent. */
  static synchronized Path storeDir(String data, CodeBlock codes) {
    Path dir = BenchData.dir().resolve("store-" + data + "-n" + codes.size() + "-b" + codes.layout().bits());
    Path done = dir.resolveSibling(dir.getFileName() + ".done");
    try {
      if (Files.exists(done)) return dir;
      if (Files.exists(dir)) try (Stream<Path> s = Files.walk(dir)) {
        for (Path p : s.sorted(Comparator.reverseOrder()).toList()) Files.delete(p);
      }
      long t0 = System.nanoTime();
      try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
        w.add(codes, null);
      }
      Files.writeString(done, Long.toString((System.nanoTime() - t0) / 1_000_000));
      return dir;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /** The on-disk index seen as a searcher (no filter, no mask: what the benchmarks ask). */
  private record ReaderSearcher(IndexReader reader) implements CodeSearcher {
    @Override
    public CodeLayout layout() {
      return reader.layout();
    }

    @Override
    public int size() {
      return reader.liveCount();
    }

    @Override
    public Hits knn(long[] query, int k, IntPredicate accept, long[] mask) {
      if (accept != null) throw new UnsupportedOperationException("filters go through IndexReader.filter");
      return reader.search(query, k, null, mask);
    }

    @Override
    public Hits radius(long[] query, int radius, IntPredicate accept, long[] mask) {
      if (accept != null) throw new UnsupportedOperationException("filters go through IndexReader.filter");
      return reader.searchRadius(query, radius, null, mask);
    }
  }
}
