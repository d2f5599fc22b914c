package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.SyntheticCodes;
import io.actindex.encode.CodeFiles;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.channels.FileChannel;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.nio.file.StandardOpenOption;
import java.util.SplittableRandom;
import java.util.stream.IntStream;

/**
 * The seeded benchmark data, generated once and cached on disk so that every JMH fork loads the
 * same examples quickly.
 *
 * <ul>
 *   <li>{@code relu}: a random two-hidden-layer ReLU network ({@link SyntheticCodes.ReluNet}, 32
 *       inputs, a 12-cluster Gaussian mixture, {@code bits/2} neurons per layer); each example has
 *       its code and its {@code bits} float activations. Queries {@code in} come from the same
 *       mixture; queries {@code ood} from the mixture shifted by {@link #OOD_SHIFT}.
 *   <li>{@code dense}: a random ReLU network whose units are mostly alive
 *       ({@link SyntheticCodes.ReluNet#dense}, 32 inputs, a 20-cluster Gaussian mixture, {@code
 *       bits/2} neurons per layer): no constant bit, every bit fires on 19-81% of the examples; at
 *       1M 256-bit codes the median in-distribution 1-NN distance is 21 bits (measured). Queries
 *       as for {@code relu}.
 *   <li>{@code uniform}: uniform random codes. Queries {@code in} are stored codes with 0 to 4
 *       random bits flipped (near duplicates); queries {@code ood} are fresh random codes.
 * </ul>
 *
 * <p>The cache folder is {@code -Dactindex.bench.data} (default: {@code actindex-bench} in the
 * temporary folder), with a sub-folder {@code seed-<hex>} for a seed other than {@link
 * #TUNED_SEED}. Files are raw little-endian arrays named by their parameters; a file of the wrong
 * length is regenerated.
 */
public final class BenchData {
  private BenchData() {}

  /** Seed the benchmarks were tuned on. */
  public static final long TUNED_SEED = 0x5EED_AC71L;
  /**
   * Seed of the networks, the stored examples and the queries: {@code -Dactindex.bench.seed} (hex
   * or decimal), else {@link #TUNED_SEED}. Another seed draws other networks and mixtures of the
   * same shape: data the planner's thresholds and the cluster sizes were never tuned on.
   */
  public static final long SEED = Long.decode(System.getProperty("actindex.bench.seed", Long.toString(TUNED_SEED)));
  /** How far OOD queries move every cluster centre, in {@link SyntheticCodes.ReluNet} units. */
  public static final double OOD_SHIFT = 4.0;
  /** Queries per pool; a benchmark cycles through them. */
  public static final int QUERIES = 1024;

  private static final int INPUT_DIM = 32, CLUSTERS = 12, DENSE_CLUSTERS = 20, CHUNK = 1 << 15;

  /** The cache folder. */
  public static Path dir() {
    String p = System.getProperty("actindex.bench.data");
    Path d = p == null || p.isBlank() ? Path.of(System.getProperty("java.io.tmpdir"), "actindex-bench") : Path.of(p);
    if (SEED != TUNED_SEED) d = d.resolve("seed-" + Long.toHexString(SEED)); // every cached file and store of another seed apart
    try {
      return Files.createDirectories(d);
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /** The ReLU network behind data set {@code relu} at {@code bits} (two layers of bits/2). */
  public static SyntheticCodes.ReluNet net(int bits) {
    return net("relu", bits);
  }

  /** The ReLU network behind data set {@code relu} or {@code dense} at {@code bits} (two layers of bits/2). */
  public static SyntheticCodes.ReluNet net(String data, int bits) {
    return net(data, bits, SEED);
  }

  /** As {@link #net(String, int)}, drawn from {@code seed} instead of {@link #SEED} (tests over many seeds). */
  static SyntheticCodes.ReluNet net(String data, int bits, long seed) {
    if (bits < 2 || bits % 2 != 0) throw new IllegalArgumentException(data + " codes need an even bit count, got " + bits);
    return switch (data) {
      case "relu" -> new SyntheticCodes.ReluNet(INPUT_DIM, bits / 2, bits / 2, CLUSTERS, seed);
      case "dense" -> SyntheticCodes.ReluNet.dense(INPUT_DIM, bits / 2, bits / 2, DENSE_CLUSTERS, seed);
      default -> throw new IllegalArgumentException("no network behind data set " + data);
    };
  }

  private static boolean fromNet(String data) {
    return data.equals("relu") || data.equals("dense");
  }

  /** The {@code n} stored codes of data set {@code data} ("relu", "dense" or "uniform"). */
  public static CodeBlock codes(String data, int n, int bits) {
    CodeLayout layout = layout(data, bits);
    Path f = dir().resolve(data + "-codes-n" + n + "-b" + bits + ".bin");
    long[] words = readLongs(f, (long) n * layout.words());
    if (words == null) {
      if (fromNet(data)) {
        generate(data, n, bits);
        words = readLongs(f, (long) n * layout.words());
      } else {
        words = SyntheticCodes.uniform(n, bits, SEED).words();
        writeLongs(f, words);
      }
    }
    return new CodeBlock(layout, n, words);
  }

  /** The {@code n x bits} float activations (row-major) of data set {@code relu}. */
  public static float[] activations(int n, int bits) {
    return activations("relu", n, bits);
  }

  /** The {@code n x bits} float activations (row-major) of data set {@code relu} or {@code dense}. */
  public static float[] activations(String data, int n, int bits) {
    Path f = dir().resolve(data + "-acts-n" + n + "-b" + bits + ".bin");
    float[] acts = readFloats(f, (long) n * bits);
    if (acts == null) {
      generate(data, n, bits);
      acts = readFloats(f, (long) n * bits);
    }
    return acts;
  }

  /** A query pool: codes, and for {@code relu} the float activations too (else null). */
  public record Queries(CodeBlock codes, float[] activations) {
    public long[][] codeArrays() {
      long[][] out = new long[codes.size()][];
      for (int i = 0; i < out.length; i++) out[i] = codes.code(i);
      return out;
    }

    public float[][] activationRows() {
      int d = codes.layout().bits();
      float[][] out = new float[codes.size()][];
      for (int i = 0; i < out.length; i++) out[i] = java.util.Arrays.copyOfRange(activations, i * d, (i + 1) * d);
      return out;
    }
  }

  /** {@link #QUERIES} queries of kind {@code in} or {@code ood} for data set {@code data}. */
  public static Queries queries(String data, String kind, int n, int bits) {
    boolean ood = switch (kind) {
      case "in" -> false;
      case "ood" -> true;
      default -> throw new IllegalArgumentException("query kind must be in or ood, got " + kind);
    };
    long seed = SEED ^ (ood ? 0x00D_00DL : 0x1D_1DL);
    return switch (data) {
      case "relu", "dense" -> {
        SyntheticCodes.Sample s = net(data, bits).sample(QUERIES, ood ? OOD_SHIFT : 0, seed);
        yield new Queries(s.codes(), s.activations());
      }
      case "uniform" -> {
        if (ood) yield new Queries(SyntheticCodes.uniform(QUERIES, bits, seed), null);
        CodeBlock stored = codes(data, n, bits);
        yield new Queries(nearDuplicates(stored, QUERIES, 4, seed), null);
      }
      default -> throw new IllegalArgumentException("data set must be relu, dense or uniform, got " + data);
    };
  }

  /** {@code count} stored codes picked at random, each with 0..maxFlips random bits flipped. */
  static CodeBlock nearDuplicates(CodeBlock stored, int count, int maxFlips, long seed) {
    SplittableRandom rnd = new SplittableRandom(seed);
    int w = stored.wordsPerCode(), bits = stored.layout().bits();
    long[] out = new long[count * w];
    for (int i = 0; i < count; i++) {
      System.arraycopy(stored.words(), rnd.nextInt(stored.size()) * w, out, i * w, w);
      int flips = rnd.nextInt(maxFlips + 1);
      for (int f = 0; f < flips; f++) {
        int b = rnd.nextInt(bits);
        out[i * w + (b >>> 6)] ^= 1L << (b & 63);
      }
    }
    return new CodeBlock(stored.layout(), count, out);
  }

  private static CodeLayout layout(String data, int bits) {
    return switch (data) {
      case "relu", "dense" -> net(data, bits).layout();
      case "uniform" -> CodeLayout.single("bits", bits);
      default -> throw new IllegalArgumentException("data set must be relu, dense or uniform, got " + data);
    };
  }

  /**
   * The codes of {@link #codes} as a {@code .npy} of bool (n x bits) in the cache folder, for builds
   * through the command line. Generated chunk by chunk with the same seeds as {@link #codes}, without
   * holding the codes or the activations whole (10M 256-bit codes are a 2.56 GB file).
   */
  public static Path codesNpy(String data, int n, int bits) throws IOException {
    Path npy = dir().resolve("codes-" + data + "-n" + n + "-b" + bits + ".npy");
    if (Files.exists(npy)) return npy;
    if (!fromNet(data)) throw new IllegalArgumentException("codesNpy needs a network data set, got " + data);
    SyntheticCodes.ReluNet net = net(data, bits);
    int batch = 2 * Runtime.getRuntime().availableProcessors();
    try (NpyWriter w = NpyWriter.create(npy, NpyDtype.BOOL, bits)) {
      for (int c0 = 0; c0 * (long) CHUNK < n; c0 += batch) {
        int first = c0;
        CodeBlock[] parts = IntStream.range(first, Math.min(first + batch, (n + CHUNK - 1) / CHUNK)).parallel()
            .mapToObj(c -> net.sample(Math.min(CHUNK, n - c * CHUNK), 0, SEED + 0x9E3779B97F4A7C15L * (c + 1)).codes())
            .toArray(CodeBlock[]::new);
        for (CodeBlock part : parts) w.writeBytes(CodeFiles.unpack(part), part.size());
      }
      w.commit();
    }
    return npy;
  }

  /** Generates a network's codes and activations in parallel chunks (seeded per chunk) and caches both. */
  private static synchronized void generate(String data, int n, int bits) {
    SyntheticCodes.ReluNet net = net(data, bits);
    int w = net.layout().words();
    long[] words = new long[Math.multiplyExact(n, w)];
    float[] acts = new float[Math.multiplyExact(n, bits)];
    int chunks = (n + CHUNK - 1) / CHUNK;
    IntStream.range(0, chunks).parallel().forEach(c -> {
      int from = c * CHUNK, m = Math.min(CHUNK, n - from);
      SyntheticCodes.Sample s = net.sample(m, 0, SEED + 0x9E3779B97F4A7C15L * (c + 1));
      System.arraycopy(s.codes().words(), 0, words, from * w, m * w);
      System.arraycopy(s.activations(), 0, acts, from * bits, m * bits);
    });
    writeLongs(dir().resolve(data + "-codes-n" + n + "-b" + bits + ".bin"), words);
    writeFloats(dir().resolve(data + "-acts-n" + n + "-b" + bits + ".bin"), acts);
  }

  private static long[] readLongs(Path f, long count) {
    ByteBuffer b = read(f, count * 8);
    if (b == null) return null;
    long[] out = new long[(int) count];
    b.asLongBuffer().get(out);
    return out;
  }

  private static float[] readFloats(Path f, long count) {
    ByteBuffer b = read(f, count * 4);
    if (b == null) return null;
    float[] out = new float[(int) count];
    b.asFloatBuffer().get(out);
    return out;
  }

  private static ByteBuffer read(Path f, long bytes) {
    try (FileChannel ch = FileChannel.open(f, StandardOpenOption.READ)) {
      if (ch.size() != bytes) return null;
      return ch.map(FileChannel.MapMode.READ_ONLY, 0, bytes).order(ByteOrder.LITTLE_ENDIAN);
    } catch (java.nio.file.NoSuchFileException e) {
      return null;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  private static void writeLongs(Path f, long[] a) {
    write(f, (long) a.length * 8, (buf, from, len) -> buf.asLongBuffer().put(a, from, len), 8, a.length);
  }

  private static void writeFloats(Path f, float[] a) {
    write(f, (long) a.length * 4, (buf, from, len) -> buf.asFloatBuffer().put(a, from, len), 4, a.length);
  }

  private interface Filler {
    void fill(ByteBuffer buf, int from, int len);
  }

  private static void write(Path f, long bytes, Filler filler, int size, int count) {
    Path tmp = f.resolveSibling(f.getFileName() + ".tmp");
    try (FileChannel ch = FileChannel.open(tmp, StandardOpenOption.CREATE, StandardOpenOption.TRUNCATE_EXISTING, StandardOpenOption.WRITE)) {
      int per = (1 << 24) / size;
      ByteBuffer buf = ByteBuffer.allocateDirect(per * size).order(ByteOrder.LITTLE_ENDIAN);
      for (int from = 0; from < count; from += per) {
        int len = Math.min(per, count - from);
        buf.clear();
        filler.fill(buf, from, len);
        buf.limit(len * size);
        while (buf.hasRemaining()) ch.write(buf);
      }
      if (ch.size() != bytes) throw new IOException("short write to " + tmp);
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    try {
      Files.move(tmp, f, StandardCopyOption.REPLACE_EXISTING, StandardCopyOption.ATOMIC_MOVE);
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }
}
