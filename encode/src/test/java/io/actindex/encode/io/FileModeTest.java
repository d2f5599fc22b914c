package io.actindex.encode.io;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assumptions.assumeTrue;

import java.nio.file.FileSystems;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.attribute.PosixFilePermission;
import java.util.Map;
import java.util.Set;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Files written through a temporary file and a rename get the mode any new file gets under the
 * process's umask (the mode of a file made with {@code Files.createFile} in the same folder, the
 * reference), not the owner-only 0600 of {@code Files.createTempFile}.
 */
class FileModeTest {
  @TempDir Path tmp;

  @Test
  void atomicWritersUseTheUmaskMode() throws Exception {
    assumeTrue(FileSystems.getDefault().supportedFileAttributeViews().contains("posix"), "POSIX file modes");
    Set<PosixFilePermission> umaskMode = Files.getPosixFilePermissions(Files.createFile(tmp.resolve("plain")));
    Path npy = tmp.resolve("a.npy");
    try (NpyWriter w = NpyWriter.create(npy, NpyDtype.FLOAT32, 2)) {
      w.write(new float[] {1, 2}, 1);
      w.commit();
    }
    assertEquals(umaskMode, Files.getPosixFilePermissions(npy), "npy");
    Path st = tmp.resolve("m.safetensors");
    SafetensorsWriter.write(st, Map.of("w", new SafetensorsWriter.Tensor(new long[] {1}, new double[] {1})), Map.of());
    assertEquals(umaskMode, Files.getPosixFilePermissions(st), "safetensors");
  }
}
