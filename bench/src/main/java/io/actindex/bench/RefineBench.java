package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.Magnitudes;
import io.actindex.query.Refine;
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
 * The cost of refining, on the on-disk index ({@link IndexReader}, the cached store of the relu
 * codes): plain exact Hamming k-NN ({@code candidates = 0}, the baseline of the same run) against
 * the refined search of {@link Refine}: the {@code candidates} nearest plus every code tied with the
 * last ({@link Refine#candidates}: k-NN of C, then the radius search at the C-th distance), each dequantised from 8-bit magnitudes (held in memory
 * here) and re-ranked by cosine distance to the query's float activations. relu data (codes and activations of the
 * same examples), one query per call, one thread. {@link #candidatesOnly} times the candidate
 * search alone (the C nearest and their ties), so the cost can be split. Setup records the mean number of candidates re-ranked (ties
 * included, over 256 queries) and the bytes per example of the magnitudes.
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx8g", "--add-modules=jdk.incubator.vector"})
@Warmup(iterations = 3, time = 2)
@Measurement(iterations = 5, time = 2)
public class RefineBench {
  @Param({"1000000"})
  public int n;

  @Param({"256"})
  public int bits;

  @Param({"in"})
  public String queries;

  @Param({"10"})
  public int k;

  /** 0 = plain Hamming k-NN (the baseline); else the candidates re-ranked. */
  @Param({"0", "100", "1000"})
  public int candidates;

  private IndexReader index;
  private Magnitudes mags;
  private long[][] pool;
  private float[][] poolActs;
  private float[] buf;

  @Setup(Level.Trial)
  public void setup() {
    CodeBlock codes = BenchData.codes("relu", n, bits);
    index = IndexReader.open(CodeContenders.storeDir("relu", codes));
    mags = Magnitudes.quantise(BenchData.activations(n, bits), n, bits, 8);
    BenchData.Queries q = BenchData.queries("relu", queries, n, bits);
    pool = q.codeArrays();
    poolActs = q.activationRows();
    buf = new float[bits];
    if (candidates > 0) {
      long total = 0;
      for (int i = 0; i < 256; i++) total += candidates(pool[i]).size();
      String key = Facts.key("refine", Map.of("n", "" + n, "bits", "" + bits, "queries", queries, "k", "" + k,
          "candidates", "" + candidates));
      Facts.put(key, "mean_candidates", total / 256.0);
      Facts.put(key, "magnitude_bytes", (double) Magnitudes.rowBytes(bits, 8));
    }
  }

  private Hits candidates(long[] q) {
    return Refine.candidates(index, q, candidates, null, null);
  }

  @org.openjdk.jmh.annotations.TearDown(Level.Trial)
  public void close() {
    index.close();
  }

  @Benchmark
  @BenchmarkMode(Mode.SampleTime)
  @OutputTimeUnit(TimeUnit.MICROSECONDS)
  public Object search(QueryCursor c) {
    int i = c.next(pool.length);
    if (candidates == 0) return index.search(pool[i], k, null, null);
    return Refine.rerank(candidates(pool[i]), poolActs[i], (id, out) -> mags.dequantise(id, out, 0), buf, Refine.Metric.COSINE,
        null, k);
  }

  @Benchmark
  @BenchmarkMode(Mode.SampleTime)
  @OutputTimeUnit(TimeUnit.MICROSECONDS)
  public Object candidatesOnly(QueryCursor c) {
    int i = c.next(pool.length);
    return candidates == 0 ? index.search(pool[i], k, null, null) : candidates(pool[i]);
  }
}
