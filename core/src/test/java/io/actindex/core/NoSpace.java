package io.actindex.core;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;

/** Tests' full disk: the JDK's own exception for ENOSPC. */
public final class NoSpace {
  private NoSpace() {}

  /**
   * The exception a write to Linux's {@code /dev/full} throws (every write there fails with
   * ENOSPC); on a system without it, an {@link IOException} with the same text.
   */
  public static IOException exception() {
    Path full = Path.of("/dev/full");
    if (Files.isWritable(full)) {
      try {
        Files.write(full, new byte[4096]);
      } catch (IOException e) {
        return e;
      }
    }
    return new IOException("No space left on device");
  }
}
