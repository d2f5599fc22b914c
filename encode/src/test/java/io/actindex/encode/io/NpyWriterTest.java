package io.actindex.encode.io;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.encode.Golden;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class NpyWriterTest {
  @TempDir Path tmp;

  @Test
  void sameBytesAsNumpysSave() throws IOException {
    // version_1_0.npy: a (3, 4) float32 array written by numpy.lib.format.write_array (NumPy 2.x).
    double[] v = Golden.expected("version").values();
    Path out = tmp.resolve("v.npy");
    try (NpyWriter w = NpyWriter.create(out, NpyDtype.FLOAT32, 4)) {
      w.write(java.util.Arrays.copyOfRange(v, 0, 4), 1);
      w.write(java.util.Arrays.copyOfRange(v, 4, 12), 2);
      w.commit();
    }
    assertThat(Files.readAllBytes(out)).isEqualTo(Files.readAllBytes(Golden.path("version_1_0.npy")));
  }

  @Test
  void roundTripEveryWritableType() throws IOException {
    double[] v = {0, 1, -1, 2.5, 100, -7};
    for (NpyDtype t : NpyDtype.values()) {
      Path out = tmp.resolve(t + ".npy");
      try (NpyWriter w = NpyWriter.create(out, t, 3)) {
        w.write(v, 2);
        w.commit();
      }
      double[] back = NpyReaderTest.readAll(out, 1);
      for (int i = 0; i < v.length; i++) {
        double want = switch (t) {
          case BOOL -> v[i] != 0 ? 1 : 0;
          case FLOAT16, FLOAT32, FLOAT64 -> v[i];
          case UINT8 -> ((long) v[i]) & 0xff;
          case UINT16 -> ((long) v[i]) & 0xffff;
          case UINT32 -> ((long) v[i]) & 0xffffffffL;
          case UINT64 -> v[i] < 0 ? Math.pow(2, 64) + (long) v[i] : (long) v[i];
          default -> (long) v[i];
        };
        assertThat(back[i]).as(t + " " + i).isEqualTo(want);
      }
    }
  }

  @Test
  void uncommittedWriterLeavesNothing() throws IOException {
    Path out = tmp.resolve("never.npy");
    try (NpyWriter w = NpyWriter.create(out, NpyDtype.FLOAT32, 2)) {
      w.write(new double[] {1, 2}, 1);
    }
    try (var files = Files.list(tmp)) {
      assertThat(files.toList()).isEmpty();
    }
  }
}
