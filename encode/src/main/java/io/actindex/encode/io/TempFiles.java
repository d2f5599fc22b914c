package io.actindex.encode.io;

import java.io.IOException;
import java.nio.file.FileAlreadyExistsException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.concurrent.ThreadLocalRandom;

/**
 * The temporary file an atomic writer fills before renaming it onto its target. Unlike {@link
 * Files#createTempFile}, which makes files readable by their owner only (0600), it creates the file
 * with no explicit permissions, so it gets the mode the umask gives any new file: the renamed
 * result looks like any file the user writes.
 */
final class TempFiles {
  private TempFiles() {}

  /** A new empty file {@code .NAME.RANDOM.tmp} in the folder of {@code target}. */
  static Path beside(Path target) throws IOException {
    Path dir = target.toAbsolutePath().getParent();
    for (int attempt = 0; ; attempt++) {
      Path tmp = dir.resolve("." + target.getFileName() + "." + Long.toUnsignedString(ThreadLocalRandom.current().nextLong(), 36) + ".tmp");
      try {
        return Files.createFile(tmp);
      } catch (FileAlreadyExistsException e) {
        if (attempt > 100) throw e;
      }
    }
  }
}
