package io.actindex.index.store;

import io.actindex.core.BadInputException;
import java.io.IOException;
import java.nio.channels.FileChannel;
import java.nio.channels.FileLock;
import java.nio.channels.OverlappingFileLockException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.nio.file.attribute.BasicFileAttributes;
import java.util.Set;
import java.util.concurrent.ConcurrentHashMap;

/**
 * The folder's single-writer lock: an OS lock ({@link FileChannel#tryLock()}) on the empty file
 * {@value #FILE}, plus a set of folders locked in this JVM. The OS drops the lock when the process
 * dies, so a crashed writer leaves the file but never blocks the next one. The lock is on the file,
 * not its name: once the file is removed (or replaced) another writer can lock a new one, so the
 * holder checks ({@link #ensureHeld()}) that the name still leads to its file before each change.
 */
final class WriteLock implements AutoCloseable {
  static final String FILE = "writer.lock";
  private static final Set<Path> HELD = ConcurrentHashMap.newKeySet();

  private final Path key;
  private final Path dir;
  private final FileChannel channel;
  private final FileLock lock;
  private final Object fileId; // the locked file's identity (device and inode); null where the file system has none

  private WriteLock(Path key, Path dir, FileChannel channel, FileLock lock, Object fileId) {
    this.key = key;
    this.dir = dir;
    this.channel = channel;
    this.lock = lock;
    this.fileId = fileId;
  }

  static WriteLock acquire(Path dir) throws IOException {
    Path key = dir.toRealPath();
    if (!HELD.add(key)) throw new BadInputException("index " + dir + " is locked by another writer (in this process); close that one first");
    FileChannel ch = null;
    try {
      if (Files.isDirectory(key.resolve(FILE)))
        throw new BadInputException("index " + dir + ": " + FILE + " is a folder, not the writer's lock file; remove it");
      ch = FileChannel.open(key.resolve(FILE), StandardOpenOption.CREATE, StandardOpenOption.WRITE);
      FileLock l;
      try {
        l = ch.tryLock();
      } catch (OverlappingFileLockException e) {
        l = null;
      }
      if (l == null)
        throw new BadInputException("index " + dir + " is locked by another writer (another process holds its " + FILE
            + "); wait for that one to end and run this again (the lock ends with its process: do not remove the file)");
      return new WriteLock(key, dir, ch, l, fileId(key.resolve(FILE)));
    } catch (IOException | RuntimeException e) {
      if (ch != null) ch.close();
      HELD.remove(key);
      throw e;
    }
  }

  /**
   * Whether a writer holds {@code dir}'s lock now, in this process or another, found without keeping
   * it: this process's writers by the set of held folders (reserved meanwhile, so that none of them
   * starts while the file is open here), another process's by a shared lock tried on {@value #FILE}
   * and released at once. For that instant a writer starting in another process is refused as if
   * one ran (it says to wait and run again). Never creates the file; false when there is none or it
   * cannot be opened or locked.
   */
  static boolean heldByWriter(Path dir) {
    Path key;
    try {
      key = dir.toRealPath();
    } catch (IOException e) {
      return false;
    }
    if (!HELD.add(key)) return true;
    try (FileChannel ch = FileChannel.open(key.resolve(FILE), StandardOpenOption.READ)) {
      FileLock l = ch.tryLock(0, Long.MAX_VALUE, true);
      if (l == null) return true;
      l.release();
      return false;
    } catch (OverlappingFileLockException e) {
      return true;
    } catch (IOException e) {
      return false;
    } finally {
      HELD.remove(key);
    }
  }

  /** Whether {@value #FILE} is still the file this writer locked (not removed or replaced while held). */
  boolean held() {
    if (!lock.isValid()) return false;
    if (fileId == null) return true;
    try {
      return fileId.equals(fileId(key.resolve(FILE)));
    } catch (IOException e) {
      return false;
    }
  }

  /** Refuses to go on unless {@link #held()}: another writer may be changing the folder. */
  void ensureHeld() {
    if (!held()) throw lost(null);
  }

  /** The refusal of a writer whose lock file was removed or replaced; {@code cause} (may be null) is what failed. */
  BadInputException lost(Throwable cause) {
    return new BadInputException("index " + dir + ": its " + FILE + " was removed or replaced while this writer held it, so "
        + "another writer may be changing the index; this change was not committed: once no other writer runs, run "
        + "check --index " + dir + ", then this command again", cause);
  }

  private static Object fileId(Path file) throws IOException {
    return Files.readAttributes(file, BasicFileAttributes.class).fileKey();
  }

  @Override
  public void close() throws IOException {
    try {
      lock.release();
      channel.close();
    } finally {
      HELD.remove(key);
    }
  }
}
