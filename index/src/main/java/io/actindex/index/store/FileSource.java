package io.actindex.index.store;

import java.lang.foreign.Arena;
import java.lang.foreign.MemorySegment;
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

  /** Maps each file when asked; the mapping lives while it is reachable. */
  FileSource DIRECT = file -> ChecksummedFile.map(file, Arena.ofAuto());

  /** Maps every file now; {@link Pinned#close()} unmaps them (no reader of theirs may be used after). */
  static Pinned pin(List<Path> files) {
    Pinned p = new Pinned();
    try {
      for (Path f : files) p.open.put(f, ChecksummedFile.map(f, p.arena));
      return p;
    } catch (RuntimeException e) {
      p.close();
      throw e;
    }
  }

  /** Files mapped up front, in one arena. */
  final class Pinned implements FileSource, AutoCloseable {
    private final Arena arena = Arena.ofShared();
    private final Map<Path, MemorySegment> open = new HashMap<>();

    private Pinned() {}

    @Override
    public MemorySegment bytes(Path file) {
      MemorySegment s = open.get(file);
      return s != null ? s : ChecksummedFile.map(file, arena);
    }

    @Override
    public void close() {
      arena.close();
    }
  }
}
