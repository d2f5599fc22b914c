package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeSearcher;
import io.actindex.core.ScanSearcher;
import io.actindex.edge.EdgeBundle;
import io.actindex.index.mih.Searchers;
import io.actindex.query.EdgeExport;
import io.actindex.query.OodCalibration;
import java.util.Arrays;
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
 * The OOD score per input against ReLU-like training codes, one thread, one input per call:
 * {@code scan} = the k-th distance from the plain scan (the baseline), {@code full} = the same
 * score from the planner (MIH / cascade / scan, as the index answers it), {@code decision} = the
 * decision-only path ({@link EdgeBundle#isOut}: unique codes, most shared first, stop at the k-th
 * example within the threshold). The threshold comes from 512 separate in-distribution inputs
 * (target TPR 0.95), as {@code ood calibrate} sets it. Setup records the share of inputs decided
 * out and the number of unique codes.
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx8g"})
@Warmup(iterations = 3, time = 2)
@Measurement(iterations = 5, time = 2)
public class OodBench {
  @Param({"1000000"})
  public int n;

  @Param({"256"})
  public int bits;

  @Param({"in", "ood"})
  public String queries;

  @Param({"1", "5"})
  public int k;

  @Param({"scan", "full", "decision"})
  public String contender;

  private long[][] pool;
  private CodeSearcher searcher;
  private EdgeBundle bundle;

  @Setup(Level.Trial)
  public void setup() {
    CodeBlock codes = BenchData.codes("relu", n, bits);
    pool = BenchData.queries("relu", queries, n, bits).codeArrays();
    CodeSearcher planner = Searchers.build(codes);
    CodeBlock cal = BenchData.net(bits).sample(512, 0, BenchData.SEED ^ 0xCA1L).codes();
    double[] scores = new double[cal.size()];
    for (int i = 0; i < scores.length; i++) scores[i] = planner.knn(cal.code(i), k).dist(k - 1);
    Arrays.sort(scores);
    double threshold = OodCalibration.threshold(scores, 0.95, "bench calibration");
    searcher = switch (contender) {
      case "scan" -> new ScanSearcher(codes);
      case "full" -> planner;
      case "decision" -> null;
      default -> throw new IllegalArgumentException("contender " + contender);
    };
    if (contender.equals("decision"))
      bundle = EdgeExport.bundle(codes, new EdgeBundle.Calibration(k, EdgeBundle.Statistic.KTH, List.of(), 0.95, threshold, scores), null);
    String key = Facts.key("ood-" + contender, Map.of("n", "" + n, "bits", "" + bits, "queries", queries, "k", "" + k));
    int out = 0;
    for (long[] q : pool) if (planner.knn(q, k).dist(k - 1) > threshold) out++;
    Facts.put(key, "share_out", out / (double) pool.length);
    Facts.put(key, "threshold", threshold);
    if (bundle != null) Facts.put(key, "unique_codes", bundle.uniqueCodes());
  }

  @Benchmark
  @BenchmarkMode(Mode.SampleTime)
  @OutputTimeUnit(TimeUnit.MICROSECONDS)
  public Object score(QueryCursor c) {
    long[] q = pool[c.next(pool.length)];
    if (bundle != null) return bundle.isOut(q);
    return searcher.knn(q, k).dist(k - 1);
  }
}
