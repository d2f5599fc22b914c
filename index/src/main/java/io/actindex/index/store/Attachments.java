package io.actindex.index.store;

import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.file.Path;

/**
 * A named byte blob committed with the manifest (e.g. the model's weights).
 *
 * <pre>
 * att-N.bin  codec "actindex.attachment", version 1
 *   string  name (int byte length + UTF-8)
 *   int     content length B
 *   B       bytes of content
 * </pre>
 */
final class Attachments {
  private Attachments() {}

  static final String CODEC = "actindex.attachment";
  static final int VERSION_START = 1, VERSION_CURRENT = 1;

  static String fileName(long generation) {
    return "att-" + generation + ".bin";
  }

  static FileRef write(StoreIo io, Path dir, long generation, Manifest m, String name, byte[] content) throws IOException {
    try (ChecksummedFile.Out out = ChecksummedFile.create(io, dir.resolve(fileName(generation)), CODEC, VERSION_CURRENT,
        m.layout().hash(), m.uuid())) {
      out.writeString(name);
      out.writeInt(content.length);
      out.write(content);
      return out.finish();
    }
  }

  static byte[] read(Path dir, FileSource src, Manifest m, String name, ChecksummedFile.Check level) {
    FileRef ref = m.attachments().get(name);
    Path file = dir.resolve(ref.name());
    ChecksummedFile.In in = ChecksummedFile.check(file, src.bytes(file), CODEC, VERSION_START, VERSION_CURRENT,
        m.layout().hash(), m.uuid(), ref, level);
    String stored = in.string("name");
    if (!stored.equals(name)) throw in.error("holds attachment '" + stored + "', the manifest says '" + name + "'");
    int len = in.getCount("length", Integer.MAX_VALUE);
    ByteBuffer b = in.slice("content", len);
    in.end();
    byte[] out = new byte[len];
    b.get(out);
    return out;
  }
}
