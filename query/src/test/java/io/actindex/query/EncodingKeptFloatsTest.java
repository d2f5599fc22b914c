package io.actindex.query;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assumptions.assumeTrue;

import io.actindex.core.BadInputException;
import io.actindex.encode.EncodeOptions;
import java.io.IOException;
import java.io.RandomAccessFile;
import java.lang.management.ManagementFactory;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Random;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The floats {@link Encoding#read} keeps beside the codes (build and add with kept magnitudes,
 * queries with --refine): one array of the final size when the file says how many rows it holds,
 * and a file whose floats cannot fit one array refused before anything is read.
 */
class EncodingKeptFloatsTest {
  @TempDir Path dir;

  @Test
  void keptFloatsAreTheFileValuesAllocatedOnce() {
    // 3,072,000 bytes of floats: the stream's chunks copy them once, the kept array once more (2x); a buffer
    // doubling from 1,024 rows and cut to size at the end allocated 1 + 2 + 4 + 3 MB beside the chunks (4.3x)
    int rows = 3000, cols = 256;
    float[] values = new float[rows * cols];
    Random rnd = new Random(7);
    for (int i = 0; i < values.length; i++) values[i] = (float) rnd.nextGaussian();
    Source src = Source.activations(TestFiles.npyFloat32(dir.resolve("a.npy"), rows, cols, values));
    Encoding.Read kept = read(src, true);
    assertArrayEquals(values, kept.activations());
    assertEquals(rows, kept.codes().size());

    com.sun.management.ThreadMXBean mx = (com.sun.management.ThreadMXBean) ManagementFactory.getThreadMXBean();
    assumeTrue(mx.isThreadAllocatedMemorySupported() && mx.isThreadAllocatedMemoryEnabled(), "no allocation counts on this JVM");
    long withFloats = Long.MAX_VALUE, codesOnly = Long.MAX_VALUE; // the least of a few runs: no JIT or class loading in it
    for (int run = 0; run < 3; run++) {
      long t0 = mx.getCurrentThreadAllocatedBytes();
      read(src, false);
      long t1 = mx.getCurrentThreadAllocatedBytes();
      read(src, true);
      long t2 = mx.getCurrentThreadAllocatedBytes();
      codesOnly = Math.min(codesOnly, t1 - t0);
      withFloats = Math.min(withFloats, t2 - t1);
    }
    long floats = 4L * rows * cols, extra = withFloats - codesOnly;
    assertTrue(extra < floats * 5 / 2, "keeping " + floats + " bytes of floats allocated " + extra + " bytes more than reading codes only");
  }

  @Test
  void floatsBeyondOneArrayAreRefusedBeforeReading() throws IOException {
    // a sparse file: the header says 8,400,000 x 256 float32 (2,150,400,000 values, above what one array holds);
    // its 8.6 GB of zeros take no disk space and are never read
    int rows = 8_400_000, cols = 256;
    Path file = TestFiles.npyFloat32(dir.resolve("big.npy"), rows, cols, new float[0]); // the header only
    long head = Files.size(file);
    try (RandomAccessFile f = new RandomAccessFile(file.toFile(), "rw")) {
      f.setLength(head + 4L * rows * cols);
    }
    Source src = Source.activations(file);
    BadInputException e = assertThrows(BadInputException.class, () -> read(src, true));
    assertTrue(e.getMessage().startsWith(file + ": 8400000 rows of 256 activations") && e.getMessage().contains("8388607 rows of 256 at most"),
        e.getMessage());
  }

  @Test
  void aCapKeepsEveryFloatOrNoneInOneRead() {
    // 300 rows of 40: a CSV (row count not known in advance, the kept array grows) and a .npy (known)
    int rows = 300, cols = 40;
    float[] values = new float[rows * cols];
    Random rnd = new Random(11);
    for (int i = 0; i < values.length; i++) values[i] = rnd.nextInt(7) - 3;
    StringBuilder csv = new StringBuilder();
    for (int r = 0; r < rows; r++) {
      for (int c = 0; c < cols; c++) csv.append(c == 0 ? "" : ",").append((int) values[r * cols + c]);
      csv.append('\n');
    }
    Path text = dir.resolve("a.csv");
    try {
      Files.writeString(text, csv);
    } catch (IOException e) {
      throw new java.io.UncheckedIOException(e);
    }
    for (Source src : new Source[] {Source.activations(TestFiles.npyFloat32(dir.resolve("a.npy"), rows, cols, values)), Source.activations(text)}) {
      Encoding.Read all = read(src, true);
      assertArrayEquals(values, all.activations(), src.file().toString());
      for (long cap : new long[] {rows * cols, rows * cols + 1, 1L << 25}) {
        Encoding.Read capped = Encoding.read(src, null, EncodeOptions.positive(), null, RowRange.ALL, 7, Progress.NONE, cap);
        assertArrayEquals(values, capped.activations(), src.file() + " cap " + cap);
        assertArrayEquals(all.codes().words(), capped.codes().words());
      }
      for (long cap : new long[] {1, cols, rows * cols - 1}) { // chunks of 7 rows: past the cap mid-file
        Encoding.Read capped = Encoding.read(src, null, EncodeOptions.positive(), null, RowRange.ALL, 7, Progress.NONE, cap);
        assertEquals(null, capped.activations(), src.file() + " cap " + cap);
        assertArrayEquals(all.codes().words(), capped.codes().words());
      }
      assertEquals(null, Encoding.read(src, null, EncodeOptions.positive(), null, RowRange.ALL, 7, Progress.NONE, 0L).activations());
    }
  }

  private static Encoding.Read read(Source src, boolean floats) {
    return Encoding.read(src, null, EncodeOptions.positive(), null, RowRange.ALL, Encoding.CHUNK, Progress.NONE, floats);
  }
}
