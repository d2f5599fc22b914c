package io.actindex.bench;

import java.util.SplittableRandom;
import java.util.concurrent.TimeUnit;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Level;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.Threads;
import org.openjdk.jmh.annotations.Warmup;

/**
 * Memory-bandwidth probe: the sum of a 256 MB {@code long[]} (far larger than any cache), on one
 * thread and on all cores (each thread sums the whole array). Bytes per second = {@link #BYTES}
 * / time per call; the report sets the plain scan's effective rate against it.
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms1g", "-Xmx2g"})
@Warmup(iterations = 2, time = 1)
@Measurement(iterations = 5, time = 1)
public class BandwidthBench {
  public static final long BYTES = 256L << 20;
  private long[] data;

  @Setup(Level.Trial)
  public void setup() {
    data = new long[(int) (BYTES / 8)];
    SplittableRandom rnd = new SplittableRandom(1);
    for (int i = 0; i < data.length; i++) data[i] = rnd.nextLong();
  }

  /** Four independent sums so that additions do not limit the loop. */
  private long sum() {
    long[] a = data;
    long s0 = 0, s1 = 0, s2 = 0, s3 = 0;
    for (int i = 0; i + 3 < a.length; i += 4) {
      s0 += a[i];
      s1 += a[i + 1];
      s2 += a[i + 2];
      s3 += a[i + 3];
    }
    return s0 + s1 + s2 + s3;
  }

  @Benchmark
  @BenchmarkMode(Mode.AverageTime)
  @OutputTimeUnit(TimeUnit.MILLISECONDS)
  public long sumOneThread() {
    return sum();
  }

  @Benchmark
  @Threads(Threads.MAX)
  @BenchmarkMode(Mode.AverageTime)
  @OutputTimeUnit(TimeUnit.MILLISECONDS)
  public long sumAllCores() {
    return sum();
  }
}
