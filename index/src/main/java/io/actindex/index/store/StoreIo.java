package io.actindex.index.store;

import java.io.IOException;
import java.nio.channels.FileChannel;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.nio.file.StandardOpenOption;
import io.actindex.index.meta.MetaWriter;

/**
 * The file operations a commit makes, in one place, so that a test can stand in for the disk and
 * forget what was never forced to it (a power loss). {@link #REAL} is the file system. A class
 * rather than an interface so that the metadata store's seam, {@link #meta}, stays
 * package-private (tests of this package wrap Lucene's files through it); outside this package,
 * stand-ins extend {@link Forwarding}.
 */
public abstract class StoreIo {
  StoreIo() {}

  /** Opens {@code file} for writing, created or truncated (mode from the umask). */
  public abstract FileChannel create(Path file) throws IOException;

  /** Makes the content of {@code channel} (the file {@code file}) durable. */
  public abstract void force(FileChannel channel, Path file) throws IOException;

  /** Renames atomically, replacing {@code to}. */
  public abstract void move(Path from, Path to) throws IOException;

  /** Makes new, renamed and deleted names in {@code dir} durable. */
  public abstract void syncDir(Path dir) throws IOException;

  /** Deletes {@code file} if it exists. */
  public abstract void delete(Path file) throws IOException;

  /** How the metadata store's writer reaches its folder (Lucene makes its own files durable). */
  abstract MetaWriter.Opener meta();

  public static final StoreIo REAL = new StoreIo() {
    @Override
    public FileChannel create(Path file) throws IOException {
      return FileChannel.open(file, StandardOpenOption.CREATE, StandardOpenOption.WRITE,
          StandardOpenOption.TRUNCATE_EXISTING);
    }

    @Override
    public void force(FileChannel channel, Path file) throws IOException {
      channel.force(true);
    }

    @Override
    public void move(Path from, Path to) throws IOException {
      Files.move(from, to, StandardCopyOption.ATOMIC_MOVE);
    }

    @Override
    public void syncDir(Path dir) throws IOException {
      try (FileChannel ch = FileChannel.open(dir, StandardOpenOption.READ)) {
        ch.force(true);
      }
    }

    @Override
    public void delete(Path file) throws IOException {
      Files.deleteIfExists(file);
    }

    @Override
    MetaWriter.Opener meta() {
      return MetaWriter.Opener.FILES;
    }
  };

  /** Forwards every call to a delegate; tests override the calls they observe or break. */
  public static class Forwarding extends StoreIo {
    protected final StoreIo delegate;

    public Forwarding(StoreIo delegate) {
      this.delegate = delegate;
    }

    @Override
    public FileChannel create(Path file) throws IOException {
      return delegate.create(file);
    }

    @Override
    public void force(FileChannel channel, Path file) throws IOException {
      delegate.force(channel, file);
    }

    @Override
    public void move(Path from, Path to) throws IOException {
      delegate.move(from, to);
    }

    @Override
    public void syncDir(Path dir) throws IOException {
      delegate.syncDir(dir);
    }

    @Override
    public void delete(Path file) throws IOException {
      delegate.delete(file);
    }

    @Override
    MetaWriter.Opener meta() {
      return delegate.meta();
    }
  }
}
