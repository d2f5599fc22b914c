package io.actindex.core;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.ByteBuffer;
import java.nio.channels.FileChannel;
import java.nio.file.AtomicMoveNotSupportedException;
import java.nio.file.FileAlreadyExistsException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.nio.file.StandardOpenOption;
import java.util.concurrent.ThreadLocalRandom;
import java.util.regex.Pattern;
import java.util.stream.Stream;

/**
 * Output files written whole or not at all: a temporary file in the target's folder, filled and
 * forced to disk, then renamed onto the target. Unlike {@link Files#createTempFile}, which makes
 * files readable by their owner only (0600), the temporary file is created with no explicit
 * permissions, so it gets the mode the umask gives any new file, as the index's own files do: the
 * result looks like any file the user writes. A full disk is refused naming the target ({@link
 * DiskFull}).
 */
public final class OutputFiles {
  private OutputFiles() {}

  /** A new empty file {@code .NAME.RANDOM.tmp} in the folder of {@code target} (mode from the umask). */
  public static Path tempBeside(Path target) throws IOException {
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

  /**
   * Refuses a target that cannot take a file: its folder is missing, it is itself a folder, or it
   * lies in an index folder or a folder inside one ({@code option} names the option in the
   * message, e.g. {@code --html}).
   */
  public static void checkTarget(Path target, String option) {
    Path abs = target.toAbsolutePath();
    if (abs.getParent() == null || !Files.isDirectory(abs.getParent()))
      throw new BadInputException(target + ": its folder does not exist (" + option + ")");
    if (Files.isDirectory(abs)) throw new BadInputException(target + ": is a folder; " + option + " names a file");
    checkOutsideIndex(target, option);
  }

  /** Refuses a target in an index folder or a folder inside one (meta/): only the index's writers touch those. */
  public static void checkOutsideIndex(Path target, String option) {
    Path dir = target.toAbsolutePath().normalize().getParent();
    for (Path d : new Path[] {dir, dir == null ? null : dir.getParent()})
      if (d != null && holdsIndex(d))
        throw new BadInputException(target + ": " + d + " is an index folder, whose files only actindex's writers touch; write "
            + option + " elsewhere");
  }

  /** The names that mark an index folder: index.store's manifests ({@code manifest-N}) and its writer's lock. */
  private static final Pattern INDEX_FILE = Pattern.compile("manifest-\\d{1,18}|writer\\.lock");

  /** Whether {@code dir} holds an index (a manifest or the writer's lock file). */
  private static boolean holdsIndex(Path dir) {
    try (Stream<Path> files = Files.list(dir)) {
      return files.anyMatch(f -> INDEX_FILE.matcher(f.getFileName().toString()).matches());
    } catch (IOException | UncheckedIOException e) {
      return false; // an unreadable folder: the write itself will say so
    }
  }

  /**
   * Writes {@code bytes} to {@code target} atomically. A missing folder or a target that is a
   * folder is refused ({@link #checkTarget}); a full disk is refused naming the target, and the
   * target keeps its old content.
   */
  public static void write(Path target, byte[] bytes, String option) throws IOException {
    checkTarget(target, option);
    Path tmp = tempBeside(target);
    try {
      try (FileChannel ch = FileChannel.open(tmp, StandardOpenOption.WRITE)) {
        ByteBuffer b = ByteBuffer.wrap(bytes);
        while (b.hasRemaining()) ch.write(b);
        ch.force(true);
      }
      moveIntoPlace(tmp, target);
    } catch (IOException | RuntimeException e) {
      boolean full = DiskFull.in(e, target); // before the temporary file's space is freed
      try {
        Files.deleteIfExists(tmp);
      } catch (IOException suppressed) {
        e.addSuppressed(suppressed);
      }
      if (full) throw DiskFull.refusal(target.toString(), "it was not written (a file already there is unchanged)", e);
      throw e;
    }
  }

  /** Renames {@code tmp} onto {@code target}, atomically where the file system can. */
  public static void moveIntoPlace(Path tmp, Path target) throws IOException {
    try {
      Files.move(tmp, target, StandardCopyOption.REPLACE_EXISTING, StandardCopyOption.ATOMIC_MOVE);
    } catch (AtomicMoveNotSupportedException e) {
      Files.move(tmp, target, StandardCopyOption.REPLACE_EXISTING);
    }
  }
}
