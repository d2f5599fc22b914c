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
   * A file the command reads, named by the option that gave it (e.g. {@code --compare-a}; from the
   * library, the Java name in backquotes, {@code `compareA`}); a null file is skipped.
   */
  public record Input(String option, Path file) {}

  /**
   * Refuses a target that cannot take a file: its folder is missing, it is itself a folder, it lies
   * in an index folder or a folder inside one, or it is the same file as one of {@code inputs}
   * ({@code option} names the option in the message, e.g. {@code --html}, or from the library the
   * Java parameter in backquotes, e.g. {@code `out`}, which the command line prints as its option). Called before any work,
   * so that a refused output leaves every file as it was.
   */
  public static void checkTarget(Path target, String option, Input... inputs) {
    Path abs = target.toAbsolutePath();
    if (abs.getParent() == null || !Files.isDirectory(abs.getParent()))
      throw new BadInputException(target + ": its folder does not exist (" + option + ")");
    if (Files.isDirectory(abs)) throw new BadInputException(target + ": is a folder; " + option + " names a file");
    checkOutsideIndex(target, option);
    checkNotInput(target, option, inputs);
  }

  /**
   * Refuses a target that is the same file as one of {@code inputs}: writing it would replace a
   * file the command reads. Same file: {@link Files#isSameFile} when both exist (symbolic and hard
   * links), else equal normalized absolute paths ({@code ./x} and {@code x}).
   */
  public static void checkNotInput(Path target, String option, Input... inputs) {
    for (Input in : inputs)
      if (in != null && in.file() != null && sameFile(target, in.file()))
        throw new BadInputException(target + ": " + option + " is the same file as the input " + in.option() + " (" + in.file()
            + "); writing it would replace that input, so nothing was written: give " + option + " another file");
  }

  /**
   * Refuses two outputs of one command that name one path (the same test as {@link
   * #checkNotInput}): the second written would replace the first. Null paths are skipped.
   */
  public static void checkDistinct(Path target, String option, Path other, String otherOption) {
    if (target != null && other != null && sameFile(target, other))
      throw new BadInputException(target + ": " + option + " and " + otherOption + " (" + other
          + ") name the same path; one output would replace the other, so nothing was written: give each its own");
  }

  /** Whether {@code a} and {@code b} name one file (see {@link #checkNotInput}). */
  static boolean sameFile(Path a, Path b) {
    if (Files.exists(a) && Files.exists(b)) {
      try {
        return Files.isSameFile(a, b);
      } catch (IOException | SecurityException e) {
        // cannot tell from the file system: fall back to the names
      }
    }
    return a.toAbsolutePath().normalize().equals(b.toAbsolutePath().normalize());
  }

  /** Refuses a target in an index folder or any folder inside one (meta/): only the index's writers touch those. */
  public static void checkOutsideIndex(Path target, String option) {
    Path d = indexAbove(target);
    if (d != null)
      throw new BadInputException(target + ": " + d + " is an index folder, whose files only actindex's writers touch; write "
          + option + " elsewhere");
  }

  /**
   * Refuses a new index folder {@code dir} inside an existing index folder (at any depth): the
   * outer index's writers own every file below it, and nesting one index in another invites a
   * delete or a copy of one to take the other along. {@code option} names the option, e.g. {@code --out}.
   */
  public static void checkIndexPlace(Path dir, String option) {
    Path d = indexAbove(dir);
    if (d != null)
      throw new BadInputException(dir + ": is inside the index folder " + d + "; an index cannot hold another index: give " + option
          + " a folder outside it");
  }

  /** The nearest folder above {@code path} (its parent, or any folder above that) that holds an index, or null. */
  public static Path indexAbove(Path path) {
    for (Path d = path.toAbsolutePath().normalize().getParent(); d != null; d = d.getParent())
      if (holdsIndex(d)) return d;
    return null;
  }

  /** The names that mark an index folder: index.store's manifests ({@code manifest-N}) and its writer's lock. */
  private static final Pattern INDEX_FILE = Pattern.compile("manifest-\\d{1,18}|writer\\.lock");

  /** Whether {@code dir} holds an index (a manifest or the writer's lock file). */
  public static boolean holdsIndex(Path dir) {
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
