package io.actindex.index.store;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.lang.foreign.Arena;
import java.lang.foreign.MemorySegment;
import java.nio.channels.FileChannel;
import java.nio.file.Path;
import java.util.HashMap;
import java.util.List;
import java.util.Map;

/**
 * Where the bytes of index files come from: mapped when asked, or mapped up front ("pinned"), so
 * that a writer deleting an old generation's files while a reader loads them (allowed on POSIX
 * file systems) cannot pull them away mid-read. Mappings use long offsets: a file of any size.
 */
interface FileSource {

  /** The content of {@code file}, mapped; BadInputException if it is missing. */
  MemorySegment bytes(Path file);

  /** {@code file} open for positional reads while this source is (null: none; read the mapping). */
  default FileChannel channel(Path file) {
    return null;
  }

  /** Maps each file when asked; the mapping lives while it is reachable. */
  FileSource DIRECT = file -> ChecksummedFile.map(file, Arena.ofAuto());

  /** Maps every file now; {@link Pinned#close()} unmaps them (no reader of theirs may be used after). */
  static Pinned pin(List<Path> files) {
    Pinned p = new Pinned();
    Path f = null;
    try {
      for (Path file : files) {
        f = file;
        FileChannel ch = ChecksummedFile.open(f);
        p.channels.put(f, ch);
        p.open.put(f, ChecksummedFile.map(ch, p.arena));
      }
      return p;
    } catch (IOException e) {
      p.close();
      throw new UncheckedIOException("cannot read " + f, e); // the one file, not the whole list
    } catch (RuntimeException e) {
      p.close();
      throw e;
    }
  }

  /**
   * Files opened and mapped up front, in one arena. The open channels serve large reads (copying a
   * mapping out page by page costs a fault per page; see {@code ChecksummedFile.In.copy}); like the
   * mappings, they hold their files against deletion.
   */
  final class Pinned implements FileSource, AutoCloseable {
    private final Arena arena = Arena.ofShared();
    private final Map<Path, MemorySegment> open = new HashMap<>();
    private final Map<Path, FileChannel> channels = new HashMap<>();

    private Pinned() {}

    @Override
    public MemorySegment bytes(Path file) {
      MemorySegment s = open.get(file);
      return s != null ? s : ChecksummedFile.map(file, arena);
    }

    @Override
    public FileChannel channel(Path file) {
      return channels.get(file);
    }

    @Override
    public void close() {
      arena.close();
      for (FileChannel ch : channels.values()) {
        try {
          ch.close();
        } catch (IOException e) {
          // read-only: nothing is lost
        }
      }
    }
  }
}
