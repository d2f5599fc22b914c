package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.Hamming;
import io.actindex.index.mih.SelfJoin;
import java.util.Map;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicLong;
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
 * The near-duplicate self-join: every pair within radius {@code r}, counted as it streams. {@code
 * join} = {@link SelfJoin} (distinct codes, s-of-m key tables, build included), streaming every pair
 * and the distinct pairs the groups need, in one pass ({@code forEachPair}): the work of
 * {@code actindex dupes --pairs FILE} without metadata and file writing;
 * {@code brute} = a blocked brute-force join (tiles of 256 x 256 codes, row tiles spread over the
 * threads), the baseline. The brute force is run at 100k only: at 1M it would take hours; the
 * report scales it by {@code (n / 100k)^2}. One shot per iteration (a join takes seconds).
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx8g", "--add-modules=jdk.incubator.vector"})
@Warmup(iterations = 1)
@Measurement(iterations = 3)
public class SelfJoinBench {
  @Param({"relu"})
  public String data;

  @Param({"100000", "1000000"})
  public int n;

  @Param({"256"})
  public int bits;

  @Param({"0", "1", "2", "3", "4"})
  public int r;

  @Param({"1", "2"})
  public int threads;

  @Param({"join", "brute"})
  public String method;

  private CodeBlock codes;

  @Setup(Level.Trial)
  public void setup() {
    codes = BenchData.codes(data, n, bits);
    if (method.equals("join")) {
      SelfJoin j = SelfJoin.build(codes, r);
      long[] pairs = {j.distinct().identicalPairs()};
      j.forEachDistinctPair(threads, (u, v, d) -> pairs[0] += (long) j.distinct().holders(u) * j.distinct().holders(v), null);
      String key = Facts.key(method, Map.of("data", data, "n", "" + n, "bits", "" + bits, "r", "" + r, "threads", "" + threads));
      Facts.put(key, "pairs", pairs[0]);
      Facts.put(key, "distinct_codes", j.distinct().count());
      Facts.put(key, "tables", j.tables());
      Facts.put(key, "key_parts", j.keyParts());
    }
  }

  @Benchmark
  @BenchmarkMode(Mode.SingleShotTime)
  @OutputTimeUnit(TimeUnit.MILLISECONDS)
  public long join() {
    if (method.equals("brute")) return brute(codes, r, threads);
    SelfJoin j = SelfJoin.build(codes, r);
    long[] count = {0, 0};
    j.forEachPair(threads, (a, b, d) -> count[0]++, (u, v, d) -> count[1]++, null);
    return count[0] + count[1];
  }

  /** Pairs within r by comparing every pair, in 256 x 256 tiles; row tiles shared among the threads. */
  static long brute(CodeBlock codes, int r, int threads) {
    int n = codes.size(), w = codes.wordsPerCode(), tile = 256;
    long[] data = codes.words();
    int tiles = (n + tile - 1) / tile;
    AtomicLong next = new AtomicLong(), total = new AtomicLong();
    Runnable worker = () -> {
      long found = 0;
      for (long ti; (ti = next.getAndIncrement()) < tiles; ) {
        int i0 = (int) ti * tile, i1 = Math.min(n, i0 + tile);
        for (int j0 = i0; j0 < n; j0 += tile) {
          int j1 = Math.min(n, j0 + tile);
          for (int i = i0; i < i1; i++)
            for (int j = Math.max(j0, i + 1); j < j1; j++)
              if (Hamming.distanceBounded(data, i * w, data, j * w, w, r) <= r) found++;
        }
      }
      total.addAndGet(found);
    };
    if (threads == 1) worker.run();
    else {
      try (ExecutorService pool = Executors.newFixedThreadPool(threads)) {
        Future<?>[] fs = new Future<?>[threads];
        for (int t = 0; t < threads; t++) fs[t] = pool.submit(worker);
        for (Future<?> f : fs) f.get();
      } catch (Exception e) {
        throw new IllegalStateException(e);
      }
    }
    return total.get();
  }
}
