package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Loops;
import io.actindex.core.ScanKernel;
import io.actindex.core.ScanSearcher;
import io.actindex.core.SyntheticCodes;
import io.actindex.core.TopK;
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
 * The plain scan's loops across code widths, with and without a layer mask: uniform random codes
 * of two layers of {@code bits / 2} (so 100 and 300 bits put the layer boundary inside a word),
 * exact 10-NN, one query per call. {@code mask}: {@code none}, {@code second} (the second layer),
 * {@code first} (the first layer). Divide a masked row by the {@code none} row of the same width.
 * {@code loops}: the scalar loops or the Vector API ones ({@link Loops}), called directly, so that
 * both run in one JVM and can be divided row by row (the vector rows need the fork's {@code
 * --add-modules jdk.incubator.vector} and 512-bit vectors).
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms1g", "-Xmx4g", "--add-modules=jdk.incubator.vector"})
@Warmup(iterations = 2, time = 1)
@Measurement(iterations = 3, time = 1)
public class ScanKernelBench {
  @Param({"64", "100", "128", "192", "256", "300", "512", "1024"})
  public int bits;

  @Param({"100000", "1000000"})
  public int n;

  @Param({"none", "second", "first"})
  public String mask;

  @Param({"scalar", "vector"})
  public String loops;

  private Loops kernel;
  private long[] data;
  private long[][] pool;
  private long[] m;

  @Setup(Level.Trial)
  public void setup() {
    CodeLayout layout = CodeLayout.parse("a:" + bits / 2 + ",b:" + (bits - bits / 2));
    CodeBlock codes = new CodeBlock(layout, n, SyntheticCodes.uniform(n, bits, 0x5CA9L).words());
    data = codes.words();
    kernel = Loops.valueOf(loops.toUpperCase(java.util.Locale.ROOT));
    if (kernel == Loops.VECTOR && !Loops.vectorUsable())
      throw new IllegalStateException("the vector loops need --add-modules jdk.incubator.vector and 512-bit vectors");
    pool = new long[64][];
    for (int i = 0; i < pool.length; i++) pool[i] = codes.code((int) ((long) i * 7919 % n));
    m = switch (mask) {
      case "none" -> null;
      case "second" -> layout.mask(1);
      case "first" -> layout.mask(0);
      default -> throw new IllegalArgumentException("mask must be none, second or first, got " + mask);
    };
    m = ScanSearcher.checkMask(layout, m); // as the scan sees it
  }

  @Benchmark
  @BenchmarkMode(Mode.SampleTime)
  @OutputTimeUnit(TimeUnit.MICROSECONDS)
  public TopK knn(QueryCursor c) {
    long[] q = pool[c.next(pool.length)];
    int w = q.length;
    TopK top = new TopK(10);
    ScanKernel.knn(kernel, ScanKernel.Words.of(q, m, w), data, w, 0, n, null, null, top, Integer.MAX_VALUE);
    return top;
  }
}
