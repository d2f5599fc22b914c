package io.actindex.bench;

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
 * Exact cosine k-NN over the float activations of the relu data set (the same examples as the
 * codes): plain loops, or one EJML matrix-vector product per query. Its cost does not depend on
 * where the query lies, so only {@code in} queries run by default.
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx8g", "--add-modules=jdk.incubator.vector"})
@Warmup(iterations = 2, time = 2)
@Measurement(iterations = 3, time = 3)
public class CosineBench {
  @Param({"100000", "1000000"})
  public int n;

  @Param({"64", "128", "256", "1024"})
  public int bits;

  @Param({"in"})
  public String queries;

  @Param({"1", "10"})
  public int k;

  @Param({"loops", "ejml"})
  public String method;

  float[] rows;
  private float[][] pool;

  @Setup(Level.Trial)
  public void setup() {
    rows = CodeSearchBench.unitActivations(n, bits);
    pool = BenchData.queries("relu", queries, n, bits).activationRows();
    String key = Facts.key("cosine-" + method, Map.of("data", "relu", "n", "" + n, "bits", "" + bits, "queries", queries, "k", "" + k));
    Facts.put(key, "bytes_mem", 4.0 * bits);
    Facts.put(key, "bytes_disk", 4.0 * bits);
    Facts.put(key, "recall_vs_cosine", 1.0);
  }

  /** Per-thread scratch: the score vector (loops) or an EJML searcher with its own vectors. */
  @State(Scope.Thread)
  public static class Scratch {
    float[] scores;
    ExactCosine.Ejml ejml;

    @Setup(Level.Trial)
    public void setup(CosineBench b) {
      if (b.method.equals("ejml")) ejml = new ExactCosine.Ejml(b.rows, b.bits);
      else scores = new float[b.n];
    }
  }

  private int[] search(QueryCursor c, Scratch s) {
    float[] q = pool[c.next(pool.length)];
    return s.ejml != null ? s.ejml.knn(q, k) : ExactCosine.knnLoops(rows, bits, q, k, s.scores);
  }

  @Benchmark
  @BenchmarkMode(Mode.SampleTime)
  @OutputTimeUnit(TimeUnit.MICROSECONDS)
  public int[] knn(QueryCursor c, Scratch s) {
    return search(c, s);
  }

  @Benchmark
  @Threads(Threads.MAX)
  @BenchmarkMode(Mode.Throughput)
  @OutputTimeUnit(TimeUnit.SECONDS)
  public int[] knnAllCores(QueryCursor c, Scratch s) {
    return search(c, s);
  }
}
