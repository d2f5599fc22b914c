package io.actindex.core;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.ByteBuffer;
import java.nio.channels.FileChannel;
import java.nio.file.AtomicMoveNotSupportedException;
import java.nio.file.DirectoryStream;
import java.nio.file.FileAlreadyExistsException;
import java.nio.file.Files;
import java.nio.file.LinkOption;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.nio.file.StandardOpenOption;
import java.nio.file.attribute.BasicFileAttributes;
import java.nio.file.attribute.FileTime;
import java.time.Duration;
import java.time.Instant;
import java.util.Set;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.ThreadLocalRandom;
import java.util.regex.Pattern;
import java.util.stream.Stream;

/**
 * Output files written whole or not at all: a temporary file in the target's folder, filled and
 * forced to disk, then renamed onto the target. Unlike {@link Files#createTempFile}, which makes
 * files readable by their owner only (0600), the temporary file is created with no explicit
 * permissions, so it gets the mode the umask gives any new file, as the index's own files do: the
 * result looks like any file the user writes. A full disk is refused naming the target ({@link
 * DiskFull}). A write killed before its rename leaves its temporary file; the next write of the
 * same target removes it once it is stale ({@link #removeStale}), and Ctrl-C or SIGTERM deletes it
 * at once (a shutdown hook).
 */
public final class OutputFiles {
  private OutputFiles() {}

  /**
   * Starts writing {@code target}: a new empty file {@code .NAME.RANDOM.tmp} in its folder (mode from
   * the umask), open for writing and locked (see {@link Temp}). Write through {@link Temp#channel},
   * then {@link Temp#commit}; {@link Temp#close} without a commit deletes the file.
   */
  public static Temp begin(Path target) throws IOException {
    Path dir = target.toAbsolutePath().normalize().getParent();
    for (int attempt = 0; ; attempt++) {
      Path tmp = dir.resolve(tempPrefix(target) + Long.toUnsignedString(ThreadLocalRandom.current().nextLong(), 36) + ".tmp");
      FileChannel ch;
      try {
        ch = FileChannel.open(tmp, StandardOpenOption.CREATE_NEW, StandardOpenOption.WRITE);
      } catch (FileAlreadyExistsException e) {
        if (attempt > 100) throw e;
        continue;
      }
      Temp t = new Temp(target, tmp, ch);
      Pending.FILES.add(tmp);
      try {
        ch.tryLock(); // null only if another process locked this brand-new file: write all the same
      } catch (IOException | UnsupportedOperationException e) {
        // a file system without locks: the age rule alone keeps other writers off this file
      }
      return t;
    }
  }

  /** The start of every temporary file name of {@code target}: {@code .NAME.} */
  private static String tempPrefix(Path target) {
    return "." + target.getFileName() + ".";
  }

  /** The random part of a temporary file name: {@link Long#toUnsignedString(long, int)} in base 36. */
  private static final String RANDOM_PART = "[0-9a-z]{1,13}";

  /**
   * How long a temporary file must have gone unmodified before a write of its target may remove it
   * (when no process holds its lock): covers a writer between creating its file and locking it,
   * an older actindex that did not lock, and a file system that does not share locks between machines.
   */
  public static final Duration STALE_AFTER = Duration.ofMinutes(10);

  /**
   * A temporary file being written beside its target. While it is open it holds an exclusive lock on
   * the whole file (advisory; the system drops it when the process ends, however it ends) and is on
   * this JVM's list of files that a shutdown hook deletes (Ctrl-C, SIGTERM). {@link #commit} renames
   * it onto the target and then removes the target's stale temporary files ({@link #removeStale}).
   */
  public static final class Temp implements AutoCloseable {
    private final Path target, path;
    private final FileChannel channel;
    private boolean committed;

    private Temp(Path target, Path path, FileChannel channel) {
      this.target = target;
      this.path = path;
      this.channel = channel;
    }

    public Path path() {
      return path;
    }

    /** The open file, for writing (closing it releases the lock: leave that to {@link #close}). */
    public FileChannel channel() {
      return channel;
    }

    /** Forces the file to disk, renames it onto the target (still locked), closes it, then removes stale ones. */
    public void commit() throws IOException {
      channel.force(true);
      moveIntoPlace(path, target);
      committed = true;
      close();
      removeStale(target);
    }

    /** Closes the file and deletes it unless {@link #commit} renamed it. */
    @Override
    public void close() throws IOException {
      Pending.FILES.remove(path);
      try {
        channel.close();
      } finally {
        if (!committed) Files.deleteIfExists(path);
      }
    }
  }

  /** The temporary files this JVM is writing; a shutdown hook (Ctrl-C, SIGTERM) deletes those left. */
  private static final class Pending {
    static final Set<Path> FILES = ConcurrentHashMap.newKeySet();

    static {
      try {
        Runtime.getRuntime().addShutdownHook(new Thread(() -> {
          for (Path p : FILES) {
            try {
              Files.deleteIfExists(p);
            } catch (IOException | RuntimeException e) {
              // exiting: nothing to tell
            }
          }
        }, "actindex-output-cleanup"));
      } catch (IllegalStateException e) {
        // the JVM is exiting already
      }
    }
  }

  /**
   * Removes the temporary files {@code .NAME.RANDOM.tmp} of {@code target} that a write killed before
   * its rename left behind: those this JVM is not writing, unmodified for {@link #STALE_AFTER}, and
   * whose lock no process holds (taken here before the file is deleted). Anything else in the folder,
   * and any file that cannot be tested, is left alone; a failure is ignored (the target is written).
   */
  static void removeStale(Path target) {
    removeStale(target, Pattern.compile(Pattern.quote(tempPrefix(target)) + RANDOM_PART + "\\.tmp"));
  }

  /**
   * Removes, under the rules of {@link #removeStale}, the temporary files {@code NAMEDIGITS.tmp} (1-20
   * decimal digits: {@link Files#createTempFile} with the target's name as prefix) that earlier
   * versions of {@code calibrate-planner} left beside {@code target} when killed before their rename.
   * They were never locked, so the age rule alone keeps a writer of such a version off its file.
   */
  public static void removeStaleCreateTempFiles(Path target) {
    // the random part Files.createTempFile puts between prefix and suffix: an unsigned long in decimal
    removeStale(target, Pattern.compile(Pattern.quote(target.getFileName().toString()) + "[0-9]{1,20}\\.tmp"));
  }

  /** {@link #removeStale(Path)} for the files of {@code target}'s folder whose whole names match {@code temporary}. */
  private static void removeStale(Path target, Pattern temporary) {
    Path dir = target.toAbsolutePath().normalize().getParent();
    FileTime cutoff = FileTime.from(Instant.now().minus(STALE_AFTER));
    try (DirectoryStream<Path> files = Files.newDirectoryStream(dir)) {
      for (Path f : files) {
        String name = f.getFileName().toString();
        if (!temporary.matcher(name).matches() || Pending.FILES.contains(f)) continue;
        try {
          BasicFileAttributes a = Files.readAttributes(f, BasicFileAttributes.class, LinkOption.NOFOLLOW_LINKS);
          if (!a.isRegularFile() || a.lastModifiedTime().compareTo(cutoff) > 0) continue;
          try (FileChannel ch = FileChannel.open(f, StandardOpenOption.WRITE, LinkOption.NOFOLLOW_LINKS)) {
            if (ch.tryLock() != null) Files.delete(f); // the lock goes with the channel
          }
        } catch (IOException | RuntimeException e) {
          // in use in this JVM (OverlappingFileLockException), not ours to open, gone already: leave it
        }
      }
    } catch (IOException | RuntimeException e) {
      // an unreadable folder: the leftovers stay
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
    Temp tmp = begin(target);
    try {
      ByteBuffer b = ByteBuffer.wrap(bytes);
      while (b.hasRemaining()) tmp.channel().write(b);
      tmp.commit();
    } catch (IOException | RuntimeException e) {
      boolean full = DiskFull.in(e, target); // before the temporary file's space is freed
      try {
        tmp.close();
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
