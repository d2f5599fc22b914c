package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.core.ScanSearcher;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import io.actindex.index.store.MergePolicy;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Comparator;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.concurrent.TimeUnit;
import java.util.stream.Stream;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Level;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Param;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.TearDown;
import org.openjdk.jmh.annotations.Warmup;
import org.openjdk.jmh.infra.Blackhole;

/**
 * Exact k-NN through the on-disk index ({@link IndexReader#search}) the way users work: with a
 * metadata filter of a given share, with deletions, over ten segments, on one layer. Scenario
 * {@code scan} is the baseline every other row is divided by: the plain scan over the same codes,
 * no filter, one block. Stores are built once per data set and cached in the bench data folder.
 *
 * <ul>
 *   <li>{@code clean}: one segment, nothing deleted, no filter;
 *   <li>{@code filter10}, {@code filter1}, {@code filter0.01}: a filter keeping that percentage of
 *       the ids (seeded random), built once with {@link IndexReader#filter};
 *   <li>{@code tomb1}: one id deleted; {@code deleted1}, {@code deleted30}: 1% and 30% deleted;
 *   <li>{@code segments10}: the same codes added in ten batches, kept as ten segments (no merges);
 *   <li>{@code mask}: distance over the second layer only; {@code maskscan}: the plain scan with
 *       that mask (what a masked query cost before the partition served masks).
 * </ul>
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx10g"})
@Warmup(iterations = 2, time = 2)
@Measurement(iterations = 3, time = 2)
public class RealUseBench {
  @Param({"dense", "relu"})
  public String data;

  @Param({"1000000"})
  public int n;

  @Param({"256"})
  public int bits;

  @Param({"in", "ood"})
  public String queries;

  @Param({"10"})
  public int k;

  @Param({"scan", "clean", "filter10", "filter1", "filter0.01", "tomb1", "deleted1", "deleted30", "segments10", "mask", "maskscan"})
  public String scenario;

  private ScanSearcher scan;
  private IndexReader reader;
  private IdSet filter;
  private long[] mask;
  private long[][] pool;

  @Setup(Level.Trial)
  public void setup() {
    CodeBlock codes = BenchData.codes(data, n, bits);
    pool = BenchData.queries(data, queries, n, bits).codeArrays();
    switch (scenario) {
      case "scan", "maskscan" -> scan = new ScanSearcher(codes);
      case "clean", "mask", "filter10", "filter1", "filter0.01" -> reader = IndexReader.open(store(data, codes, 1, null));
      case "tomb1" -> reader = IndexReader.open(store(data, codes, 1, "tomb1"));
      case "deleted1" -> reader = IndexReader.open(store(data, codes, 1, "deleted1"));
      case "deleted30" -> reader = IndexReader.open(store(data, codes, 1, "deleted30"));
      case "segments10" -> reader = IndexReader.open(store(data, codes, 10, null));
      default -> throw new IllegalArgumentException("unknown scenario " + scenario);
    }
    if (scenario.startsWith("filter")) {
      double share = Double.parseDouble(scenario.substring("filter".length())) / 100;
      filter = reader.filter(randomIds(n, share, 0xF117E2L));
    }
    if (scenario.startsWith("mask")) mask = codes.layout().mask(1);
  }

  @TearDown(Level.Trial)
  public void close() {
    if (reader != null) reader.close();
  }

  @Benchmark
  @BenchmarkMode(Mode.SampleTime)
  @OutputTimeUnit(TimeUnit.MICROSECONDS)
  public void knn(QueryCursor c, Blackhole bh) {
    long[] q = pool[c.next(pool.length)];
    Hits h = scan != null ? scan.knn(q, k, null, mask) : reader.search(q, k, filter, mask);
    bh.consume(h);
  }

  static int[] randomIds(int n, double share, long seed) {
    SplittableRandom rnd = new SplittableRandom(seed);
    java.util.stream.IntStream.Builder ids = java.util.stream.IntStream.builder();
    for (int i = 0; i < n; i++) if (rnd.nextDouble() < share) ids.add(i);
    return ids.build().toArray();
  }

  /** The cached store of these codes in {@code segments} batches, with the named deletions applied. */
  static synchronized Path store(String data, CodeBlock codes, int segments, String deletions) {
    String name = "realuse-" + data + "-n" + codes.size() + "-b" + codes.layout().bits() + "-s" + segments
        + (deletions == null ? "" : "-" + deletions);
    Path dir = BenchData.dir().resolve(name), done = dir.resolveSibling(name + ".done");
    if (Files.exists(done) && segmentCount(dir) == segments) return dir; // older stores may have merged
    try {
      delete(dir);
      int n = codes.size();
      if (deletions == null) {
        try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
          // a merge factor above the batch count keeps every batch its own segment
          w.mergePolicy(new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, segments + 1, MergePolicy.DEFAULT_FLOOR_CODES));
          for (int b = 0; b < segments; b++) w.add(codes.slice((int) ((long) b * n / segments), (int) ((long) (b + 1) * n / segments)), null);
        }
      } else { // a copy of the clean store, then one delete
        Path clean = store(data, codes, segments, null);
        try (Stream<Path> s = Files.walk(clean)) {
          for (Path p : s.toList()) Files.copy(p, dir.resolve(clean.relativize(p).toString()));
        }
        int[] del = switch (deletions) {
          case "tomb1" -> new int[] {n / 2};
          default -> { // deletedP: P% at random (deleted1, deleted30; DeletedPaired asks for others)
            if (!deletions.matches("deleted\\d{1,2}")) throw new IllegalArgumentException("unknown deletions " + deletions);
            yield randomIds(n, Integer.parseInt(deletions.substring(7)) / 100.0, 0xDE1E7EL);
          }
        };
        try (IndexWriter w = IndexWriter.open(dir)) {
          // deleted share 1: the deleted codes stay in the segment (the leftover these scenarios measure)
          w.mergePolicy(new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, MergePolicy.DEFAULT_MERGE_FACTOR,
              MergePolicy.DEFAULT_FLOOR_CODES, 1));
          w.delete(del);
        }
      }
      Files.writeString(done, "");
      return dir;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  private static int segmentCount(Path dir) {
    try (IndexReader r = IndexReader.open(dir)) {
      return r.info().segments().size();
    }
  }

  static void delete(Path dir) throws IOException {
    if (Files.exists(dir)) try (Stream<Path> s = Files.walk(dir)) {
      for (Path p : s.sorted(Comparator.reverseOrder()).toList()) Files.delete(p);
    }
  }
}
