package io.actindex.index.store;

import io.actindex.core.BadInputException;
import java.io.IOException;
import java.nio.channels.FileChannel;
import java.nio.channels.FileLock;
import java.nio.channels.OverlappingFileLockException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.util.Set;
import java.util.concurrent.ConcurrentHashMap;

/**
 * The folder's single-writer lock: an OS lock ({@link FileChannel#tryLock()}) on the empty file
 * {@value #FILE}, plus a set of folders locked in this JVM. The OS drops the lock when the process
 * dies, so a crashed writer leaves the file but never blocks the next one.
 */
final class WriteLock implements AutoCloseable {
  static final String FILE = "writer.lock";
  private static final Set<Path> HELD = ConcurrentHashMap.newKeySet();

  private final Path key;
  private final FileChannel channel;
  private final FileLock lock;

  private WriteLock(Path key, FileChannel channel, FileLock lock) {
    this.key = key;
    this.channel = channel;
    this.lock = lock;
  }

  static WriteLock acquire(Path dir) throws IOException {
    Path key = dir.toRealPath();
    if (!HELD.add(key)) throw new BadInputException("index " + dir + " is locked by another writer (in this process)");
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
        throw new BadInputException("index " + dir + " is locked by another writer (another process holds "
            + key.resolve(FILE) + ")");
      return new WriteLock(key, ch, l);
    } catch (IOException | RuntimeException e) {
      if (ch != null) ch.close();
      HELD.remove(key);
      throw e;
    }
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
