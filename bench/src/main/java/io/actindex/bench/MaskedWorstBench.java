package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hits;
import io.actindex.core.ScanSearcher;
import io.actindex.index.mih.Searchers;
import java.util.concurrent.TimeUnit;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Level;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OperationsPerInvocation;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Param;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.Warmup;
import org.openjdk.jmh.infra.Blackhole;
import org.openjdk.jmh.infra.IterationParams;
import org.openjdk.jmh.runner.IterationType;

/**
 * The rows of {@link WorstCaseSweep} whose queries are too short to time one by one (masked k-NN
 * of 0.1-7 µs), under JMH: one invocation answers the same fixed set of {@link #SET} queries
 * (the sweep's set: the first {@code SET} of the pool), through the planner ({@link
 * Searchers#build}) or through the masked plain scan, its baseline. Sample mode: one sample is one
 * invocation's time over {@code SET} (ns per query); a set's ratio is the planner's median over the
 * masked scan's from the same run ({@code bench/masked-ratios.jq}). On a shared core the median
 * holds where the mean does not: an invocation shorter than a time slice (the sub-µs sets: 15-400
 * µs a set) that loses the core to another process counts as one slow sample, not as a shift of
 * the whole score. Sets of several ms (dense codes, out-of-distribution queries) get no such
 * protection; alternating in one fork (below) at least pairs them in time.
 *
 * <p>{@code searcher=both} (the default) times both in the same fork: iterations alternate, the
 * planner first (warm-up iterations too, so the JIT compiles both paths, and the scan loops they
 * share, in the JVM that is timed); JMH's own score then mixes the two and only the per-iteration
 * samples count ({@code bench/masked-ratios.jq} splits them: even measurement iterations are the
 * planner's, odd ones the masked scan's). {@code searcher=planner} or {@code maskscan} time one in
 * a fork of its own ({@code searcher} comes last in JMH's order, so a set's two forks run one after
 * the other). Setup checks that the planner answers every query of the set exactly as the masked
 * scan does, and throws if not.
 *
 * <p>Run (held-out seed; drop the seed property for the tuned one): {@code java
 * -Djmh.ignoreLock=true -jar bench/target/benchmarks.jar MaskedWorstBench -p data=relu -p k=1
 * -jvmArgsAppend "-Dactindex.bench.data=DIR -Dactindex.bench.seed=0x7A11C0DE"}.
 */
@State(Scope.Benchmark)
@Fork(value = 3, jvmArgsAppend = {"-Xms2g", "-Xmx8g", "--add-modules=jdk.incubator.vector"})
@Warmup(iterations = 6, time = 1)
@Measurement(iterations = 10, time = 1)
@BenchmarkMode(Mode.SampleTime)
@OutputTimeUnit(TimeUnit.NANOSECONDS)
public class MaskedWorstBench {
  /** Queries per set (per invocation). */
  static final int SET = 256;

  @Param({"relu", "dense"})
  public String data;

  @Param("100000")
  public int n;

  @Param({"64", "128", "256"})
  public int bits;

  @Param({"in", "ood"})
  public String queries;

  @Param({"1", "10"})
  public int k;

  @Param("second")
  public String mask;

  @Param("both")
  public String searcher;

  private CodeSearcher planner, scan, timed;
  private int warmups, measurements;
  private long[][] set;
  private long[] layers;

  @Setup(Level.Trial)
  public void setup() {
    CodeBlock codes = BenchData.codes(data, n, bits);
    planner = Searchers.build(codes);
    scan = new ScanSearcher(codes);
    set = WorstCaseSweep.querySet(data, queries, n, bits, SET);
    layers = WorstCaseSweep.layerMask(codes.layout(), mask);
    requireSame(planner, scan, set, k, layers,
        data + " n=" + n + " bits=" + bits + " queries=" + queries + " mask=" + mask + " k=" + k + " seed 0x" + Long.toHexString(BenchData.SEED));
    timed = switch (searcher) {
      case "planner" -> planner;
      case "maskscan", "both" -> scan;
      default -> throw new IllegalArgumentException("searcher must be planner, maskscan or both, got " + searcher);
    };
  }

  /** With {@code searcher=both}: the planner on even iterations (warm-up and measurement counted apart), the masked scan on odd ones. */
  @Setup(Level.Iteration)
  public void alternate(IterationParams iteration) {
    if (!searcher.equals("both")) return;
    int i = iteration.getType() == IterationType.WARMUP ? warmups++ : measurements++;
    timed = i % 2 == 0 ? planner : scan;
  }

  /** Throws unless {@code planner} answers every query of {@code set} as {@code scan} does (ids and distances). */
  static void requireSame(CodeSearcher planner, CodeSearcher scan, long[][] set, int k, long[] mask, String what) {
    for (int i = 0; i < set.length; i++) {
      Hits p = planner.knn(set[i], k, null, mask), s = scan.knn(set[i], k, null, mask);
      if (!p.equals(s)) throw new IllegalStateException("planner and masked scan differ on query " + i + " of " + what + ": " + p + " against " + s);
    }
  }

  @Benchmark
  @OperationsPerInvocation(SET)
  public void knnSet(Blackhole bh) {
    for (long[] q : set) bh.consume(timed.knn(q, k, null, layers));
  }
}
