package io.actindex.query;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BadInputException;
import io.actindex.core.Randoms;
import io.actindex.encode.EncodeOptions;
import io.actindex.index.store.Magnitudes;
import java.io.IOException;
import java.io.RandomAccessFile;
import java.lang.management.ManagementFactory;
import java.lang.management.MemoryMXBean;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Random;
import java.util.stream.IntStream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A build's kept magnitudes quantised in a second read of the file, chunk by chunk: the same as
 * quantising the floats held in one array, a file changed between the reads refused, and the floats
 * never held (the heap in use after a collection during the build, no timing).
 */
class StreamedMagnitudesTest {
  @TempDir Path dir;

  @Test
  void sameAsQuantisingTheFloatsInOneArray() {
    for (int t = 0; t < 40; t++) {
      long seed = Randoms.seed(t);
      Random rnd = new Random(seed);
      int n = 1 + rnd.nextInt(t < 10 ? 20 : 2000), d = 1 + rnd.nextInt(300), chunk = 1 + rnd.nextInt(600);
      int bits = new int[] {2, 4, 8}[rnd.nextInt(3)];
      float[] values = reluLike(rnd, n, d);
      Source src = Source.activations(TestFiles.npyFloat32(dir.resolve("a" + t + ".npy"), n, d, values));
      // all units, or some of them in order (a build that keeps some layers)
      int[] cols = rnd.nextBoolean() ? IntStream.range(0, d).toArray() : IntStream.range(0, d).filter(j -> rnd.nextInt(3) > 0).toArray();
      if (cols.length == 0) cols = new int[] {d - 1};
      boolean relu = rnd.nextBoolean(); // an add of activations to an index of a model's: negative values taken as 0
      String why = Randoms.describe(seed) + " n=" + n + " d=" + d + " chunk=" + chunk + " bits=" + bits + " units kept=" + cols.length
          + " relu=" + relu;

      int[] kept = cols;
      StreamedMagnitudes.Ranges ranges = new StreamedMagnitudes.Ranges(src, "build", layout -> kept, relu, bits);
      Encoding.Read first = Encoding.read(src, null, EncodeOptions.positive(), null, RowRange.ALL, chunk, Progress.NONE, ranges);
      StreamedMagnitudes.Result got = StreamedMagnitudes.quantise(src, null, EncodeOptions.positive(), null, RowRange.ALL, chunk,
          Progress.NONE, first.codes(), ranges);

      float[] picked = Layers.pickColumns(values, n, d, cols).clone();
      boolean negative = false;
      for (int i = 0; relu && i < picked.length; i++)
        if (picked[i] < 0) {
          picked[i] = 0;
          negative = true;
        }
      assertEquals(negative, ranges.negative(), why);
      Magnitudes want = Magnitudes.quantise(picked, n, cols.length, bits);
      assertEquals(IndexBuilder.Quantisation.of(want, picked), got.quantisation(), why);
      assertEquals(n, got.magnitudes().count(), why);
      for (int i = 0; i < n; i++) assertArrayEquals(want.row(i), got.magnitudes().row(i), why + " row " + i);
      for (int j = 0; j < cols.length; j++) assertEquals(want.maxError(j), got.magnitudes().maxError(j), why + " unit " + j);
    }
  }

  @Test
  void aFileChangedBetweenTheReadsIsRefused() throws IOException {
    Random rnd = new Random(3);
    int n = 500, d = 40;
    float[] values = reluLike(rnd, n, d);
    Path file = dir.resolve("a.npy");
    Source src = Source.activations(TestFiles.npyFloat32(file, n, d, values));
    float[] same = values.clone();
    for (int i = 0; i < same.length; i++) if (same[i] > 0 && same[i] < 0.5f) same[i] *= 1.5f; // the same signs: the same codes
    float[] grown = java.util.Arrays.copyOf(values, (n + 1) * d);
    for (float[] other : new float[][] {same, grown}) {
      TestFiles.npyFloat32(file, n, d, values);
      StreamedMagnitudes.Ranges ranges = new StreamedMagnitudes.Ranges(src, "build", layout -> IntStream.range(0, d).toArray(), false, 8);
      Encoding.Read first = Encoding.read(src, null, EncodeOptions.positive(), null, RowRange.ALL, 64, Progress.NONE, ranges);
      TestFiles.npyFloat32(file, other.length / d, d, other);
      BadInputException e = assertThrows(BadInputException.class, () -> StreamedMagnitudes.quantise(src, null, EncodeOptions.positive(), null,
          RowRange.ALL, 64, Progress.NONE, first.codes(), ranges));
      assertTrue(e.getMessage().startsWith(file + ": changed while the build read it"), e.getMessage());
    }
  }

  @Test
  void aBuildDoesNotHoldTheFloats() {
    // 20,000 x 256 float32 = 20.5 MB of floats, 5.1 MB of 8-bit magnitudes. Three quarters through the build's progress (the
    // second read) it holds the magnitudes, the codes of each read (0.6 MB each) and a chunk (256 rows: 0.3 MB); a build that
    // held the floats until quantised would hold them too then (one array of the final size from the start)
    int rows = 20_000, cols = 256;
    Source src = Source.activations(reluLikeFile(dir.resolve("big.npy"), new Random(11), rows, cols));
    MemoryMXBean heap = ManagementFactory.getMemoryMXBean();
    long[] during = {-1};
    Progress probe = (done, total) -> {
      if (during[0] < 0 && total > 0 && done * 4 >= total * 3) during[0] = live(heap);
    };
    long before = live(heap);
    IndexBuilder.build(new IndexBuilder.BuildParams(dir.resolve("idx"), src, null, null, null, 256, 8, 1), probe);
    assertTrue(during[0] >= 0, "no progress reported past three quarters");
    long floats = 4L * rows * cols, mags = (long) rows * cols, held = during[0] - before;
    assertTrue(held < mags + floats / 2, "keeping " + mags + " bytes of magnitudes, the build held " + held + " bytes more than before it");
  }

  /** Bytes of the heap in use after a full collection (a System.gc() with G1, the default collector, is one). */
  static long live(MemoryMXBean heap) {
    System.gc();
    System.gc();
    return heap.getHeapMemoryUsage().getUsed();
  }

  @Test
  void magnitudesBeyondOneArrayAreRefusedBeforeReading() throws IOException {
    // a sparse file: the header says 8,400,000 x 256 float32; 8-bit magnitudes of that many rows take more than one array
    int rows = 8_400_000, cols = 256;
    Path file = TestFiles.npyFloat32(dir.resolve("big.npy"), rows, cols, new float[0]);
    long head = Files.size(file);
    try (RandomAccessFile f = new RandomAccessFile(file.toFile(), "rw")) {
      f.setLength(head + 4L * rows * cols);
    }
    Path out = dir.resolve("idx");
    BadInputException e = assertThrows(BadInputException.class, () -> IndexBuilder.build(
        new IndexBuilder.BuildParams(out, Source.activations(file), null, null, null, 0, 8), null));
    assertTrue(e.getMessage().startsWith(file + ": 8400000 rows of 256 units") && e.getMessage().contains("8388607 rows of 256 at 8 bits at most"),
        e.getMessage());
    assertFalse(Files.exists(out), "the index folder was made");
  }

  /** {@link #reluLike} rows written to {@code file}, the floats left to the collector. */
  private static Path reluLikeFile(Path file, Random rnd, int n, int d) {
    return TestFiles.npyFloat32(file, n, d, reluLike(rnd, n, d));
  }

  /** Rows of ReLU-like values: about half zero, some units always zero, some negative. */
  static float[] reluLike(Random rnd, int n, int d) {
    float[] v = new float[n * d];
    boolean[] dead = new boolean[d];
    for (int j = 0; j < d; j++) dead[j] = rnd.nextInt(8) == 0;
    for (int i = 0; i < n; i++)
      for (int j = 0; j < d; j++) {
        if (dead[j]) continue;
        float g = (float) (rnd.nextGaussian() * (1 + j % 5));
        v[i * d + j] = j % 7 == 0 ? g : Math.max(0, g);
      }
    return v;
  }
}
