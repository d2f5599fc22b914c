package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hamming;
import io.actindex.core.Hits;
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
import org.openjdk.jmh.annotations.Threads;
import org.openjdk.jmh.annotations.Warmup;

/**
 * Exact Hamming k-NN with each actindex search path, one query per call, on one thread
 * ({@link #knn}: latency distribution) and on all cores ({@link #knnAllCores}: throughput).
 * Setup (not timed) records the bytes per example, the build time and, on relu data, how many of
 * the exact cosine 10-NN the Hamming k-NN finds (ties at the k-th distance count as found).
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx8g", "--add-modules=jdk.incubator.vector"})
@Warmup(iterations = 3, time = 2)
@Measurement(iterations = 5, time = 2)
public class CodeSearchBench {
  @Param({"relu", "dense", "uniform"})
  public String data;

  @Param({"100000", "1000000"})
  public int n;

  @Param({"64", "128", "256", "1024"})
  public int bits;

  @Param({"in", "ood"})
  public String queries;

  @Param({"1", "10", "100"})
  public int k;

  @Param({"planner", "mih", "cascade", "scan", "store"})
  public String searcher;

  private CodeSearcher index;
  private long[][] pool;

  @Setup(Level.Trial)
  public void setup() {
    CodeBlock codes = BenchData.codes(data, n, bits);
    pool = BenchData.queries(data, queries, n, bits).codeArrays();
    long t0 = System.nanoTime();
    CodeContenders.Built built = CodeContenders.build(searcher, codes, data);
    index = built.searcher();
    double buildMs = (System.nanoTime() - t0) / 1e6;
    String key = Facts.key(searcher, Map.of("data", data, "n", "" + n, "bits", "" + bits, "queries", queries, "k", "" + k));
    if (!searcher.equals("store")) Facts.put(key, "build_ms", buildMs); // the store is built once and cached
    Facts.put(key, "bytes_mem", (codes.words().length * 8.0 + built.extraBytes()) / n);
    if (!Double.isNaN(built.diskBytesPerExample())) Facts.put(key, "bytes_disk", built.diskBytesPerExample());
    if (data.equals("relu") && searcher.equals(CodeContenders.SCAN)) {
      int[][] truth = CosineTruth.get(n, bits, queries, () -> unitActivations(n, bits));
      Facts.put(key, "recall_vs_cosine", tieAwareRecall(codes, truth, k));
    }
  }

  static float[] unitActivations(int n, int bits) {
    float[] a = BenchData.activations(n, bits);
    ExactCosine.normalizeRows(a, bits);
    return a;
  }

  /** Share of the exact cosine k-NN rows whose Hamming distance is within the Hamming k-th best. */
  private double tieAwareRecall(CodeBlock codes, int[][] truth, int k) {
    int w = codes.wordsPerCode();
    double sum = 0;
    for (int q = 0; q < truth.length; q++) {
      Hits h = index.knn(pool[q], k);
      int kth = h.dist(h.size() - 1), found = 0, m = Math.min(k, truth[q].length);
      for (int i = 0; i < m; i++) if (Hamming.distance(pool[q], 0, codes.words(), truth[q][i] * w, w) <= kth) found++;
      sum += (double) found / m;
    }
    return sum / truth.length;
  }

  @Benchmark
  @BenchmarkMode(Mode.SampleTime)
  @OutputTimeUnit(TimeUnit.MICROSECONDS)
  public Hits knn(QueryCursor c) {
    return index.knn(pool[c.next(pool.length)], k);
  }

  @Benchmark
  @Threads(Threads.MAX)
  @BenchmarkMode(Mode.Throughput)
  @OutputTimeUnit(TimeUnit.SECONDS)
  public Hits knnAllCores(QueryCursor c) {
    return index.knn(pool[c.next(pool.length)], k);
  }
}
