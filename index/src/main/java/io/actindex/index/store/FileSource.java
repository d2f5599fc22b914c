package io.actindex.index.store;

import io.actindex.core.BadInputException;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.ByteBuffer;
import java.nio.channels.FileChannel;
import java.nio.file.Files;
import java.nio.file.NoSuchFileException;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.util.HashMap;
import java.util.List;
import java.util.Map;

/**
 * Where the bytes of index files come from: straight from the folder, or from files opened
 * ("pinned") up front, so that a writer deleting an old generation's files while a reader loads
 * them (allowed on POSIX file systems) cannot pull them away mid-read.
 */
interface FileSource {

  /** The whole content of {@code file}; BadInputException if it is missing. */
  byte[] bytes(Path file);

  /** Reads each file when asked. */
  FileSource DIRECT = file -> {
    try {
      return Files.readAllBytes(file);
    } catch (NoSuchFileException e) {
      throw new BadInputException("index file " + file + " is missing", e);
    } catch (IOException e) {
      throw new UncheckedIOException("cannot read " + file, e);
    }
  };

  /** Opens every file now; {@link Pinned#close()} releases them. */
  static Pinned pin(List<Path> files) {
    Pinned p = new Pinned();
    try {
      for (Path f : files) {
        try {
          p.open.put(f, FileChannel.open(f, StandardOpenOption.READ));
        } catch (NoSuchFileException e) {
          throw new BadInputException("index file " + f + " is missing", e);
        } catch (IOException e) {
          throw new UncheckedIOException("cannot open " + f, e);
        }
      }
      return p;
    } catch (RuntimeException e) {
      p.close();
      throw e;
    }
  }

  /** Files held open. */
  final class Pinned implements FileSource, AutoCloseable {
    private final Map<Path, FileChannel> open = new HashMap<>();

    private Pinned() {}

    @Override
    public byte[] bytes(Path file) {
      FileChannel ch = open.get(file);
      if (ch == null) return DIRECT.bytes(file);
      try {
        long size = ch.size();
        if (size > Integer.MAX_VALUE - 16) throw new BadInputException("index file " + file + " is too large: " + size + " bytes");
        ByteBuffer buf = ByteBuffer.allocate((int) size);
        while (buf.hasRemaining()) if (ch.read(buf, buf.position()) < 0) break;
        if (buf.hasRemaining()) throw new BadInputException("index file " + file + " shrank while being read");
        return buf.array();
      } catch (IOException e) {
        throw new UncheckedIOException("cannot read " + file, e);
      }
    }

    @Override
    public void close() {
      for (FileChannel ch : open.values()) {
        try {
          ch.close();
        } catch (IOException ignored) {
          // read-only channel
        }
      }
    }
  }
}
