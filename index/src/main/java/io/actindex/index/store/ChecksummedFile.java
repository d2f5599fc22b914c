package io.actindex.index.store;

import io.actindex.core.BadInputException;
import java.io.BufferedOutputStream;
import java.io.ByteArrayInputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.io.OutputStream;
import java.nio.BufferUnderflowException;
import java.nio.ByteBuffer;
import java.nio.channels.FileChannel;
import java.nio.charset.CharacterCodingException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.util.UUID;
import java.util.zip.CRC32;

/**
 * The envelope shared by every binary file of an index folder: a header, a codec-specific body and
 * a CRC32 footer. All numbers are big-endian (as {@link java.io.DataOutput} writes them).
 *
 * <pre>
 * header:  int    MAGIC (0x41435849, "ACXI")
 *          string codec name (int byte length, then UTF-8 bytes), e.g. "actindex.codes"
 *          int    format version, accepted if in the codec's [VERSION_START, VERSION_CURRENT]
 *          int    layout hash ({@link io.actindex.core.CodeLayout#hash()})
 *          long   index UUID, most significant bits
 *          long   index UUID, least significant bits
 * body:    codec-specific, see the codec's class
 * footer:  int    FOOTER_MAGIC (~MAGIC)
 *          long   CRC32 of every byte before this field (high 32 bits zero)
 * </pre>
 *
 * <p>A reader loads the whole file, checks (in this order) the length, magic, codec name, version,
 * footer magic, CRC32, layout hash and UUID, and throws {@link BadInputException} naming the file
 * and the field at fault. Writers fsync the file before {@link Out#finish()} returns.
 */
public final class ChecksummedFile {
  private ChecksummedFile() {}

  public static final int MAGIC = 0x41435849;
  public static final int FOOTER_MAGIC = ~MAGIC;
  /** Bytes of the footer. */
  public static final int FOOTER_LENGTH = 12;
  private static final int MAX_STRING_BYTES = 1 << 20;

  /** What the header says; returned by {@link #read}. */
  public record Header(String codec, int version, int layoutHash, UUID uuid) {}

  /** Starts writing {@code file} (created or truncated) with its header. */
  public static Out create(Path file, String codec, int version, int layoutHash, UUID uuid) throws IOException {
    Out out = new Out(file);
    out.writeInt(MAGIC);
    out.writeString(codec);
    out.writeInt(version);
    out.writeInt(layoutHash);
    out.writeLong(uuid.getMostSignificantBits());
    out.writeLong(uuid.getLeastSignificantBits());
    return out;
  }

  /** A file being written: a DataOutputStream that tracks the CRC32; {@link #finish()} ends it. */
  public static final class Out extends DataOutputStream {
    private final Path file;
    private final FileChannel channel;
    private final CRC32 crc;

    private Out(Path file) throws IOException {
      this(file, FileChannel.open(file, StandardOpenOption.CREATE, StandardOpenOption.WRITE,
          StandardOpenOption.TRUNCATE_EXISTING), new CRC32());
    }

    private Out(Path file, FileChannel channel, CRC32 crc) {
      super(new BufferedOutputStream(new CrcStream(java.nio.channels.Channels.newOutputStream(channel), crc), 1 << 16));
      this.file = file;
      this.channel = channel;
      this.crc = crc;
    }

    /** Writes a string as an int byte length and its UTF-8 bytes. */
    public void writeString(String s) throws IOException {
      byte[] b = s.getBytes(StandardCharsets.UTF_8);
      writeInt(b.length);
      write(b);
    }

    /** Writes the footer, flushes, fsyncs and closes; returns the file's reference. */
    public FileRef finish() throws IOException {
      writeInt(FOOTER_MAGIC);
      flush();
      long value = crc.getValue();
      writeLong(value);
      flush();
      long length = channel.size();
      channel.force(true);
      close();
      return new FileRef(file.getFileName().toString(), length, (int) value);
    }
  }

  private static final class CrcStream extends java.io.FilterOutputStream {
    private final CRC32 crc;

    CrcStream(OutputStream out, CRC32 crc) {
      super(out);
      this.crc = crc;
    }

    @Override
    public void write(int b) throws IOException {
      crc.update(b);
      out.write(b);
    }

    @Override
    public void write(byte[] b, int off, int len) throws IOException {
      crc.update(b, off, len);
      out.write(b, off, len);
    }
  }

  /**
   * Reads and checks {@code file}. {@code layoutHash} and {@code uuid} may be null (not yet known,
   * as for a manifest); {@code expected} (nullable) is the reference a manifest recorded.
   */
  public static In read(Path file, String codec, int versionStart, int versionCurrent, Integer layoutHash,
      UUID uuid, FileRef expected) {
    return check(file, FileSource.DIRECT.bytes(file), codec, versionStart, versionCurrent, layoutHash, uuid, expected);
  }

  static In check(Path file, byte[] bytes, String codec, int versionStart, int versionCurrent, Integer layoutHash,
      UUID uuid, FileRef expected) {
    if (expected != null && bytes.length != expected.length())
      throw bad(file, "length is " + bytes.length + " bytes, the manifest recorded " + expected.length());
    ByteBuffer buf = ByteBuffer.wrap(bytes);
    In in = new In(file, buf);
    if (bytes.length < 4 + 4 + 4 + 4 + 16 + FOOTER_LENGTH)
      throw bad(file, "file of " + bytes.length + " bytes is too short for header and footer");
    int magic = buf.getInt();
    if (magic != MAGIC) throw bad(file, "bad magic 0x" + Integer.toHexString(magic) + " (not an actindex file)");
    buf.limit(bytes.length - FOOTER_LENGTH);
    String actualCodec = in.string("codec name");
    if (!actualCodec.equals(codec)) throw bad(file, "codec is '" + actualCodec + "', expected '" + codec + "'");
    int version = in.getInt("version");
    if (version < versionStart || version > versionCurrent)
      throw bad(file, "format version " + version + " of " + codec + " is not supported (this build reads "
          + versionStart + " to " + versionCurrent + ")");
    ByteBuffer footer = ByteBuffer.wrap(bytes, bytes.length - FOOTER_LENGTH, FOOTER_LENGTH);
    int footerMagic = footer.getInt();
    if (footerMagic != FOOTER_MAGIC)
      throw bad(file, "bad footer magic 0x" + Integer.toHexString(footerMagic) + " (truncated or damaged)");
    long stored = footer.getLong();
    CRC32 crc = new CRC32();
    crc.update(bytes, 0, bytes.length - 8);
    if (stored != crc.getValue())
      throw bad(file, "checksum mismatch: footer says 0x" + Long.toHexString(stored) + ", content has 0x"
          + Long.toHexString(crc.getValue()) + " (damaged)");
    if (expected != null && (int) stored != expected.crc())
      throw bad(file, "checksum 0x" + Long.toHexString(stored) + " differs from the manifest's 0x"
          + Integer.toHexString(expected.crc()) + " (file replaced?)");
    int hash = in.getInt("layout hash");
    if (layoutHash != null && hash != layoutHash)
      throw bad(file, "layout hash 0x" + Integer.toHexString(hash) + " differs from the index's 0x"
          + Integer.toHexString(layoutHash));
    UUID id = new UUID(in.getLong("uuid"), in.getLong("uuid"));
    if (uuid != null && !id.equals(uuid))
      throw bad(file, "belongs to index " + id + ", not to index " + uuid);
    in.header = new Header(actualCodec, version, hash, id);
    return in;
  }

  static BadInputException bad(Path file, String what) {
    return new BadInputException("index file " + file + ": " + what);
  }

  /** The checked body of a file, read field by field; every misread names the file and field. */
  public static final class In {
    private final Path file;
    private final ByteBuffer buf;
    private Header header;

    private In(Path file, ByteBuffer buf) {
      this.file = file;
      this.buf = buf;
    }

    public Path file() {
      return file;
    }

    public Header header() {
      return header;
    }

    public int getInt(String field) {
      try {
        return buf.getInt();
      } catch (BufferUnderflowException e) {
        throw bad(file, "ends inside field '" + field + "'");
      }
    }

    public long getLong(String field) {
      try {
        return buf.getLong();
      } catch (BufferUnderflowException e) {
        throw bad(file, "ends inside field '" + field + "'");
      }
    }

    public byte getByte(String field) {
      try {
        return buf.get();
      } catch (BufferUnderflowException e) {
        throw bad(file, "ends inside field '" + field + "'");
      }
    }

    /** A count field: non-negative and at most {@code max}. */
    public int getCount(String field, long max) {
      int v = getInt(field);
      if (v < 0 || v > max) throw bad(file, "field '" + field + "' is " + v + ", allowed 0.." + max);
      return v;
    }

    public String string(String field) {
      int len = getInt(field + " length");
      if (len < 0 || len > MAX_STRING_BYTES || len > buf.remaining())
        throw bad(file, "field '" + field + "' has impossible length " + len);
      byte[] b = new byte[len];
      buf.get(b);
      try {
        return StandardCharsets.UTF_8.newDecoder().decode(ByteBuffer.wrap(b)).toString();
      } catch (CharacterCodingException e) {
        throw bad(file, "field '" + field + "' is not valid UTF-8");
      }
    }

    /** Reads {@code count} longs ({@code count} checked against the remaining bytes). */
    public long[] longs(String field, long count) {
      if (count < 0 || count > buf.remaining() / 8)
        throw bad(file, "field '" + field + "' needs " + count + " longs, " + buf.remaining() + " bytes remain");
      long[] out = new long[(int) count];
      buf.asLongBuffer().get(out);
      buf.position(Math.addExact(buf.position(), Math.multiplyExact((int) count, 8)));
      return out;
    }

    /** Reads {@code count} ints ({@code count} checked against the remaining bytes). */
    public int[] ints(String field, long count) {
      if (count < 0 || count > buf.remaining() / 4)
        throw bad(file, "field '" + field + "' needs " + count + " ints, " + buf.remaining() + " bytes remain");
      int[] out = new int[(int) count];
      buf.asIntBuffer().get(out);
      buf.position(Math.addExact(buf.position(), Math.multiplyExact((int) count, 4)));
      return out;
    }

    /** The next {@code length} bytes as a buffer view (position advanced past them). */
    public ByteBuffer slice(String field, int length) {
      if (length < 0 || length > buf.remaining())
        throw bad(file, "field '" + field + "' needs " + length + " bytes, " + buf.remaining() + " remain");
      ByteBuffer s = buf.slice(buf.position(), length);
      buf.position(buf.position() + length);
      return s;
    }

    /** The rest of the body as a DataInputStream (consumes it). */
    public DataInputStream rest() {
      ByteBuffer s = slice("body", buf.remaining());
      byte[] b = new byte[s.remaining()];
      s.get(b);
      return new DataInputStream(new ByteArrayInputStream(b));
    }

    /** Checks that the body was read exactly to its end. */
    public void end() {
      if (buf.remaining() != 0) throw bad(file, buf.remaining() + " unexpected bytes before the footer");
    }

    /** A failure found while interpreting the body. */
    public BadInputException error(String what) {
      return bad(file, what);
    }
  }
}
