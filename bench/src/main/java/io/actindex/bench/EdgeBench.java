package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.edge.EdgeBundle;
import io.actindex.query.EdgeExport;
import java.util.List;
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
 * The edge reader ({@link EdgeBundle}) on 10k, 100k and 1M unique 256-bit codes (uniform random
 * codes, all distinct), one thread: {@code score} (a full pass, the k-th distance from a histogram)
 * and {@code decision} (stops at the k-th example within the threshold). {@code in} inputs are stored
 * codes with 0..4 bits flipped, {@code ood} fresh random codes; threshold 4 with k = 1 (every in
 * input is within it).
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx8g"})
@Warmup(iterations = 3, time = 2)
@Measurement(iterations = 5, time = 2)
public class EdgeBench {
  @Param({"10000", "100000", "1000000"})
  public int unique;

  @Param({"in", "ood"})
  public String queries;

  @Param({"score", "decision"})
  public String mode;

  private EdgeBundle bundle;
  private long[][] pool;

  @Setup(Level.Trial)
  public void setup() {
    CodeBlock all = BenchData.codes("uniform", 1_000_000, 256);
    CodeBlock codes = all.slice(0, unique);
    double[] cal = {0, 1, 2, 3, 4};
    bundle = EdgeExport.bundle(codes, new EdgeBundle.Calibration(1, EdgeBundle.Statistic.KTH, List.of(), 0.8, 4, cal), null);
    pool = queries.equals("in") ? new BenchData.Queries(BenchData.nearDuplicates(codes, BenchData.QUERIES, 4, BenchData.SEED ^ 0xED6EL), null).codeArrays()
        : BenchData.queries("uniform", "ood", 1_000_000, 256).codeArrays();
    Facts.put(Facts.key("edge-" + mode, Map.of("unique", "" + unique, "queries", queries)), "bundle_bytes_per_code",
        io.actindex.edge.BundleFormat.toBytes(bundle).length / (double) unique);
  }

  @Benchmark
  @BenchmarkMode(Mode.SampleTime)
  @OutputTimeUnit(TimeUnit.MICROSECONDS)
  public Object score(QueryCursor c) {
    long[] q = pool[c.next(pool.length)];
    return mode.equals("score") ? bundle.score(q) : bundle.isOut(q);
  }
}
