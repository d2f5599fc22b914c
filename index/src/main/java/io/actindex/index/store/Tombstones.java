package io.actindex.index.store;

import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.file.Path;
import java.util.UUID;
import org.roaringbitmap.RoaringBitmap;

/**
 * The ids deleted so far (never reused), as one RoaringBitmap in a {@link ChecksummedFile}.
 * Compaction drops their codes but keeps them here, so "live" is always {@code [0, nextId)} minus
 * this set.
 *
 * <pre>
 * tomb-N.bits  codec "actindex.tombstones", version 1
 *   int   nextId at writing (every id is below it)
 *   int   byte length B of the bitmap
 *   B     bytes: RoaringBitmap portable serialization (RoaringBitmap.serialize), checked with validate()
 * </pre>
 */
final class Tombstones {
  private Tombstones() {}

  static final String CODEC = "actindex.tombstones";
  static final int VERSION_START = 1, VERSION_CURRENT = 1;

  static String fileName(long generation) {
    return "tomb-" + generation + ".bits";
  }

  static FileRef write(StoreIo io, Path dir, long generation, Manifest m, int nextId, RoaringBitmap deleted) throws IOException {
    deleted.runOptimize();
    try (ChecksummedFile.Out out = ChecksummedFile.create(io, dir.resolve(fileName(generation)), CODEC, VERSION_CURRENT,
        m.layout().hash(), m.uuid())) {
      out.writeInt(nextId);
      out.writeInt(deleted.serializedSizeInBytes());
      deleted.serialize(out);
      return out.finish();
    }
  }

  static RoaringBitmap read(Path dir, FileSource src, Manifest m, ChecksummedFile.Check level) {
    if (m.tombstones() == null) return new RoaringBitmap();
    Path file = dir.resolve(m.tombstones().name());
    ChecksummedFile.In in = ChecksummedFile.check(file, src.bytes(file), CODEC, VERSION_START, VERSION_CURRENT,
        m.layout().hash(), m.uuid(), m.tombstones(), level);
    int nextId = in.getInt("nextId");
    if (nextId < 0 || nextId > m.nextId())
      throw in.error("written for nextId " + nextId + ", beyond the manifest's " + m.nextId());
    int len = in.getCount("bitmap length", Integer.MAX_VALUE);
    ByteBuffer bytes = in.slice("bitmap", len);
    in.end();
    RoaringBitmap bits = new RoaringBitmap();
    try {
      bits.deserialize(bytes);
    } catch (IOException | RuntimeException e) {
      throw in.error("bitmap does not parse: " + e);
    }
    if (bits.serializedSizeInBytes() != len)
      throw in.error("bitmap length field " + len + " does not match its content");
    try {
      bits.validate();
    } catch (RuntimeException e) {
      throw in.error("bitmap is invalid: " + e.getMessage());
    }
    if (!bits.isEmpty() && (bits.first() < 0 || bits.last() >= nextId))
      throw in.error("deleted id outside [0," + nextId + ")");
    return bits;
  }
}
