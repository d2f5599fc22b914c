package io.actindex.bench;

import io.actindex.encode.CodeStream;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import io.actindex.core.CodeBlock;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Arrays;
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
 * Encoding throughput: the relu activations as a float32 {@code .npy} file (written once into the
 * bench data folder), read and binarized ({@code > 0}) into packed codes by
 * {@link Encoders#activations}; one call encodes the whole file. Setup checks that the codes equal
 * the generator's.
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms1g", "-Xmx4g"})
@Warmup(iterations = 1)
@Measurement(iterations = 3)
@BenchmarkMode(Mode.SingleShotTime)
@OutputTimeUnit(TimeUnit.MILLISECONDS)
public class EncodeBench {
  @Param({"100000", "1000000"})
  public int n;

  @Param({"256"})
  public int bits;

  private Path file;

  @Setup(Level.Trial)
  public void setup() throws IOException {
    file = BenchData.dir().resolve("relu-acts-n" + n + "-b" + bits + ".npy");
    if (!Files.exists(file)) {
      float[] acts = BenchData.activations(n, bits);
      try (NpyWriter w = NpyWriter.create(file, NpyDtype.FLOAT32, bits)) {
        int chunk = 1 << 14;
        for (int from = 0; from < n; from += chunk) {
          int m = Math.min(chunk, n - from);
          w.write(Arrays.copyOfRange(acts, from * bits, (from + m) * bits), m);
        }
        w.commit();
      }
    }
    long[] want = BenchData.codes("relu", n, bits).words();
    try (CodeStream s = Encoders.activations(file, EncodeOptions.positive())) {
      CodeBlock first = s.next(1000);
      if (!Arrays.equals(first.words(), Arrays.copyOf(want, first.words().length)))
        throw new IllegalStateException("encoded codes differ from the generator's in " + file);
    }
  }

  @Benchmark
  public long encodeNpy() throws IOException {
    long rows = 0, check = 0;
    try (CodeStream s = Encoders.activations(file, EncodeOptions.positive())) {
      for (CodeBlock b = s.next(1 << 16); b != null; b = s.next(1 << 16)) {
        rows += b.size();
        check += b.words()[0];
      }
    }
    if (rows != n) throw new IllegalStateException("encoded " + rows + " rows of " + n);
    return rows + check;
  }
}
