package io.actindex.bench;

import java.io.IOException;
import java.util.Map;
import java.util.concurrent.TimeUnit;
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
import org.openjdk.jmh.annotations.Threads;
import org.openjdk.jmh.annotations.Warmup;

/**
 * Lucene HNSW cosine k-NN over the relu activations (approximate). The index is built once and
 * cached in the bench data folder (its one-shot build time is recorded); setup records recall@k
 * against exact cosine for the first {@link CosineTruth#QUERIES} queries of the pool.
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx8g", "--add-modules=jdk.incubator.vector"})
@Warmup(iterations = 3, time = 2)
@Measurement(iterations = 5, time = 2)
public class HnswBench {
  @Param({"100000", "1000000"})
  public int n;

  @Param({"64", "128", "256", "1024"})
  public int bits;

  @Param({"in", "ood"})
  public String queries;

  @Param({"1", "10"})
  public int k;

  private LuceneHnsw hnsw;
  private float[][] pool;

  @Setup(Level.Trial)
  public void setup() throws IOException {
    hnsw = LuceneHnsw.cached("relu-n" + n + "-b" + bits, BenchData.activations(n, bits), bits);
    if (hnsw.size() != n) throw new IllegalStateException("cached HNSW index has " + hnsw.size() + " docs, expected " + n);
    pool = BenchData.queries("relu", queries, n, bits).activationRows();
    int[][] truth = CosineTruth.get(n, bits, queries, () -> CodeSearchBench.unitActivations(n, bits));
    int[][] found = new int[truth.length][];
    for (int q = 0; q < truth.length; q++) found[q] = hnsw.knn(pool[q], k);
    String key = Facts.key("hnsw", Map.of("data", "relu", "n", "" + n, "bits", "" + bits, "queries", queries, "k", "" + k));
    Facts.put(key, "recall_vs_cosine", Recall.atK(truth, found, k));
    Facts.put(key, "build_ms", hnsw.buildMillis());
    Facts.put(key, "bytes_disk", (double) hnsw.bytesOnDisk() / n);
    Facts.put(key, "bytes_mem", (double) hnsw.bytesOnDisk() / n);
    Facts.put(key, "segments", hnsw.segments());
  }

  @TearDown(Level.Trial)
  public void close() throws IOException {
    hnsw.close();
  }

  @Benchmark
  @BenchmarkMode(Mode.SampleTime)
  @OutputTimeUnit(TimeUnit.MICROSECONDS)
  public int[] knn(QueryCursor c) {
    return hnsw.knn(pool[c.next(pool.length)], k);
  }

  @Benchmark
  @Threads(Threads.MAX)
  @BenchmarkMode(Mode.Throughput)
  @OutputTimeUnit(TimeUnit.SECONDS)
  public int[] knnAllCores(QueryCursor c) {
    return hnsw.knn(pool[c.next(pool.length)], k);
  }
}
