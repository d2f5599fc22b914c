package io.actindex.bench;

import io.actindex.core.Hits;
import io.actindex.core.ScanSearcher;
import io.actindex.index.store.IndexCheck;
import io.actindex.index.store.IndexReader;
import io.actindex.query.IndexBuilder;
import io.actindex.query.Source;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Comparator;
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

/**
 * The store on disk: opening a committed index of {@code n} codes (headers, lengths, footers and
 * counts; the codes and tables copied from the mapped files) against {@code check}, which reads
 * every byte (CRC32 of every file, every table key recomputed, Lucene checksums) — the work every
 * open did before. The index is written once per data set into the data cache (no metadata: keys
 * are synthesized). {@link Build} measures a whole build from a {@code .npy} file of bool codes.
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx6g"})
@Warmup(iterations = 3, time = 2)
@Measurement(iterations = 5, time = 2)
@BenchmarkMode(Mode.AverageTime)
@OutputTimeUnit(TimeUnit.MILLISECONDS)
public class StoreBench {
  @Param({"relu"})
  public String data;

  @Param({"1000000"})
  public int n;

  @Param({"256"})
  public int bits;

  private Path dir;

  @Setup(Level.Trial)
  public void setup() {
    dir = BenchData.dir().resolve("store-" + data + "-n" + n + "-b" + bits);
    if (Files.exists(dir.resolve("done"))) return;
    delete(dir);
    try {
      // the command line's path: the codes .npy through IndexBuilder (no activations held, so 10M fit)
      IndexBuilder.build(new IndexBuilder.BuildParams(dir.resolve("index"), Source.codes(BenchData.codesNpy(data, n, bits)), null), null);
      Files.createFile(dir.resolve("done"));
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /**
   * Exact 10-NN through the on-disk index ({@link IndexReader#search}, the planner over every
   * segment) against the plain scan over the same codes in memory ({@code scan}, the baseline), for
   * the query pools {@code in} and {@code ood} of the data set.
   */
  @State(Scope.Benchmark)
  @Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx8g"})
  @Warmup(iterations = 2, time = 2)
  @Measurement(iterations = 3, time = 2)
  @BenchmarkMode(Mode.AverageTime)
  @OutputTimeUnit(TimeUnit.MICROSECONDS)
  public static class Query {
    @Param({"relu"})
    public String data;

    @Param({"1000000"})
    public int n;

    @Param({"256"})
    public int bits;

    @Param({"in", "ood"})
    public String queries;

    private IndexReader reader;
    private ScanSearcher scan;
    private long[][] pool;

    @Setup(Level.Trial)
    public void setup() {
      StoreBench store = new StoreBench();
      store.data = data;
      store.n = n;
      store.bits = bits;
      store.setup();
      reader = IndexReader.open(store.dir.resolve("index"));
      scan = new ScanSearcher(reader.liveCodes(null));
      pool = BenchData.queries(data, queries, n, bits).codeArrays();
    }

    @TearDown(Level.Trial)
    public void close() {
      reader.close();
    }

    @Benchmark
    public Hits knn(QueryCursor c) {
      return reader.search(pool[c.next(pool.length)], 10, null, null);
    }

    @Benchmark
    public Hits scan(QueryCursor c) {
      return scan.knn(pool[c.next(pool.length)], 10);
    }
  }

  /** Open (warm page cache) and close. */
  @Benchmark
  public int open() {
    try (IndexReader r = IndexReader.open(dir.resolve("index"))) {
      return r.liveCount();
    }
  }

  /** Every byte verified. */
  @Benchmark
  public boolean check() {
    return IndexCheck.run(dir.resolve("index")).ok();
  }

  /** A build from a {@code .npy} of bool codes (n x bits), each call into a fresh folder. */
  @State(Scope.Benchmark)
  @Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx6g"})
  @Warmup(iterations = 1)
  @Measurement(iterations = 3)
  @BenchmarkMode(Mode.SingleShotTime)
  @OutputTimeUnit(TimeUnit.MILLISECONDS)
  public static class Build {
    @Param({"relu"})
    public String data;

    @Param({"1000000"})
    public int n;

    @Param({"256"})
    public int bits;

    private Path npy;
    private Path out;

    @Setup(Level.Trial)
    public void setup() throws IOException {
      npy = BenchData.codesNpy(data, n, bits);
    }

    @Setup(Level.Invocation)
    public void fresh() {
      out = BenchData.dir().resolve("build-out");
      delete(out);
    }

    @Benchmark
    public int build() {
      return IndexBuilder.build(new IndexBuilder.BuildParams(out, Source.codes(npy), null), null).rows();
    }
  }

  static void delete(Path p) {
    if (!Files.exists(p)) return;
    try (Stream<Path> s = Files.walk(p)) {
      for (Path f : s.sorted(Comparator.reverseOrder()).toList()) Files.delete(f);
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }
}
