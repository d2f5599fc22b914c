package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeSearcher;
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
import org.openjdk.jmh.annotations.Warmup;

/**
 * Exact radius search (every code within distance r, inclusive), one query per call, one thread.
 * On uniform data the {@code in} queries are stored codes with 0..4 bits flipped, so small radii
 * have hits; setup records the mean number of hits per query.
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx8g", "--add-modules=jdk.incubator.vector"})
@Warmup(iterations = 3, time = 2)
@Measurement(iterations = 5, time = 2)
public class RadiusBench {
  @Param({"uniform", "relu"})
  public String data;

  @Param({"100000", "1000000"})
  public int n;

  @Param({"64", "128", "256", "1024"})
  public int bits;

  @Param({"in"})
  public String queries;

  @Param({"0", "1", "2", "3", "4", "5", "6", "7", "8"})
  public int r;

  @Param({"planner", "mih", "cascade", "scan", "store"})
  public String searcher;

  private CodeSearcher index;
  private long[][] pool;

  @Setup(Level.Trial)
  public void setup() {
    CodeBlock codes = BenchData.codes(data, n, bits);
    pool = BenchData.queries(data, queries, n, bits).codeArrays();
    index = CodeContenders.build(searcher, codes, data).searcher();
    long hits = 0;
    for (int q = 0; q < 100; q++) hits += index.radius(pool[q], r).size();
    String key = Facts.key(searcher, Map.of("data", data, "n", "" + n, "bits", "" + bits, "queries", queries, "r", "" + r));
    Facts.put(key, "hits_per_query", hits / 100.0);
  }

  @Benchmark
  @BenchmarkMode(Mode.SampleTime)
  @OutputTimeUnit(TimeUnit.MICROSECONDS)
  public Hits radius(QueryCursor c) {
    return index.radius(pool[c.next(pool.length)], r);
  }
}
