package io.actindex.index.store;

import io.actindex.core.BadInputException;
import java.io.BufferedOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.io.OutputStream;
import java.io.UncheckedIOException;
import java.lang.foreign.Arena;
import java.lang.foreign.MemorySegment;
import java.lang.foreign.ValueLayout;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.channels.FileChannel;
import java.nio.charset.CharacterCodingException;
import java.nio.charset.StandardCharsets;
import java.nio.file.NoSuchFileException;
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
 * <p>A reader sees the file as a {@link MemorySegment} (memory-mapped, long offsets: any size) and
 * checks (in this order) the length, magic, codec name, version, footer magic, the CRC32, layout
 * hash and UUID, and throws {@link BadInputException} naming the file and the field at fault. The
 * CRC32 of every byte is always verified: before the body is read when the caller asks for a full
 * check ({@link Check#FULL}: {@code actindex check} and merges) or the file is small
 * ({@link #smallFileBytes()}); else ({@link Check#OPEN}, a big file) while the body is read, chunk
 * by chunk as the bytes pass through the heap, and compared in {@link In#end()}, so a flipped bit
 * inside a big file is refused before anyone answers from it at the cost of the CRC alone (about
 * 45 GB/s on the chunks in cache), not a second pass over the mapping. Writers fsync the file
 * before {@link Out#finish()} returns.
 */
public final class ChecksummedFile {
  private ChecksummedFile() {}

  public static final int MAGIC = 0x41435849;
  public static final int FOOTER_MAGIC = ~MAGIC;
  /** Bytes of the footer. */
  public static final int FOOTER_LENGTH = 12;
  /**
   * Longest string field, in UTF-8 bytes, on both sides: a writer refuses a longer one, so it never
   * writes what a reader refuses. An index property can be long (the per-unit medians of a layer of
   * 60,000 units are about 1.2 MB of text; at 1 MiB such an index was built and then unreadable).
   */
  static final int MAX_STRING_BYTES = 1 << 26;
  /** System property: files up to this many bytes get their CRC verified before their body is read. */
  public static final String SMALL_FILE_PROPERTY = "actindex.open.fullCheckBytes";
  private static final long SMALL_FILE_DEFAULT = 1 << 20;
  /** Arrays of at least this many bytes are read from the file, not copied out of its mapping (see {@code In.copy}). */
  static final long BULK_BYTES = 1 << 20;
  /** A stream read of at least this many bytes goes to the file (a tables payload reads 64-128 KiB at a time). */
  private static final int BULK_READ = 1 << 14;
  private static final int BULK_CHUNK = 1 << 20;
  private static final ValueLayout.OfInt INT = ValueLayout.JAVA_INT_UNALIGNED.withOrder(ByteOrder.BIG_ENDIAN);
  private static final ValueLayout.OfLong LONG = ValueLayout.JAVA_LONG_UNALIGNED.withOrder(ByteOrder.BIG_ENDIAN);

  /** How much of a file to verify when reading it. */
  public enum Check {
    /** Header, length, footer; the CRC of every byte before the body (small files) or while it is read. */
    OPEN,
    /** Also the CRC of every byte and every derived structure (check command, merges). */
    FULL
  }

  /** Files up to this size are CRC-checked before their body is read at open ({@value #SMALL_FILE_PROPERTY}, default 1 MiB). */
  public static long smallFileBytes() {
    return Long.getLong(SMALL_FILE_PROPERTY, SMALL_FILE_DEFAULT);
  }

  /** What the header says; returned by {@link #read}. */
  public record Header(String codec, int version, int layoutHash, UUID uuid) {}

  /** Starts writing {@code file} (created or truncated) with its header. */
  public static Out create(Path file, String codec, int version, int layoutHash, UUID uuid) throws IOException {
    return create(StoreIo.REAL, file, codec, version, layoutHash, uuid);
  }

  /** Starts writing {@code file} through {@code io} (tests observe fsyncs there). */
  public static Out create(StoreIo io, Path file, String codec, int version, int layoutHash, UUID uuid)
      throws IOException {
    Out out = new Out(io, file, io.create(file), new CRC32());
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
    private final StoreIo io;
    private final Path file;
    private final FileChannel channel;
    private final CRC32 crc;

    private Out(StoreIo io, Path file, FileChannel channel, CRC32 crc) {
      super(new BufferedOutputStream(new CrcStream(java.nio.channels.Channels.newOutputStream(channel), crc), 1 << 16));
      this.io = io;
      this.file = file;
      this.channel = channel;
      this.crc = crc;
    }

    /** Writes a string as an int byte length and its UTF-8 bytes. */
    public void writeString(String s) throws IOException {
      byte[] b = s.getBytes(StandardCharsets.UTF_8);
      if (b.length > MAX_STRING_BYTES)
        throw new IllegalArgumentException("a string field of " + b.length + " bytes, over the " + MAX_STRING_BYTES + " a reader takes");
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
      io.force(channel, file);
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
   * Reads and fully checks {@code file} (mapped for as long as the returned reader is reachable).
   * {@code layoutHash} and {@code uuid} may be null (not yet known, as for a manifest);
   * {@code expected} (nullable) is the reference a manifest recorded.
   */
  public static In read(Path file, String codec, int versionStart, int versionCurrent, Integer layoutHash,
      UUID uuid, FileRef expected) {
    return check(file, map(file, Arena.ofAuto()), codec, versionStart, versionCurrent, layoutHash, uuid, expected,
        Check.FULL);
  }

  /** Maps {@code file} read-only into {@code arena}; BadInputException if it is missing or a folder. */
  static MemorySegment map(Path file, Arena arena) {
    try (FileChannel ch = open(file)) {
      return map(ch, arena);
    } catch (IOException e) {
      throw new UncheckedIOException("cannot read " + file, e);
    }
  }

  /** Opens {@code file} for reading; BadInputException if it is missing or a folder. */
  static FileChannel open(Path file) {
    if (java.nio.file.Files.isDirectory(file)) throw new BadInputException("index file " + file + " is a folder, not a file");
    try {
      return FileChannel.open(file, StandardOpenOption.READ);
    } catch (NoSuchFileException e) {
      throw new BadInputException("index file " + file + " is missing", e);
    } catch (IOException e) {
      throw new UncheckedIOException("cannot read " + file, e);
    }
  }

  /** The whole of an open file, mapped read-only into {@code arena}. */
  static MemorySegment map(FileChannel ch, Arena arena) throws IOException {
    long size = ch.size();
    return size == 0 ? MemorySegment.ofArray(new byte[0]) : ch.map(FileChannel.MapMode.READ_ONLY, 0, size, arena);
  }

  /** Checks {@code bytes} as the content of {@code file}; see the class comment for what {@code level} checks. */
  static In check(Path file, MemorySegment bytes, String codec, int versionStart, int versionCurrent, Integer layoutHash,
      UUID uuid, FileRef expected, Check level) {
    long size = bytes.byteSize();
    if (expected != null && size != expected.length())
      throw bad(file, "length is " + size + " bytes, the manifest recorded " + expected.length());
    In in = new In(file, bytes);
    if (size < 4 + 4 + 4 + 4 + 16 + FOOTER_LENGTH)
      throw bad(file, "file of " + size + " bytes is too short for header and footer");
    int magic = in.getInt("magic");
    if (magic != MAGIC) throw bad(file, "bad magic 0x" + Integer.toHexString(magic) + " (not an actindex file)");
    in.limit = size - FOOTER_LENGTH;
    String actualCodec = in.string("codec name");
    if (!actualCodec.equals(codec)) throw bad(file, "codec is '" + actualCodec + "', expected '" + codec + "'");
    int version = in.getInt("version");
    if (version < versionStart || version > versionCurrent)
      throw bad(file, "format version " + version + " of " + codec + " is not supported (this build reads "
          + versionStart + " to " + versionCurrent + ")");
    int footerMagic = bytes.get(INT, size - FOOTER_LENGTH);
    if (footerMagic != FOOTER_MAGIC)
      throw bad(file, "bad footer magic 0x" + Integer.toHexString(footerMagic) + " (truncated or damaged)");
    long stored = bytes.get(LONG, size - 8);
    if (stored >>> 32 != 0) throw bad(file, "footer checksum 0x" + Long.toHexString(stored) + " is not a CRC32 (damaged)");
    if (level == Check.FULL || size <= smallFileBytes()) {
      long actual = crc(bytes, size - 8);
      if (stored != actual) throw mismatch(file, stored, actual, "");
    } else {
      in.pending = new CRC32(); // verified as the body is read, in end()
      in.stored = stored;
    }
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

  /** CRC32 of the first {@code length} bytes, in slices a ByteBuffer can address. */
  static long crc(MemorySegment bytes, long length) {
    CRC32 crc = new CRC32();
    for (long at = 0; at < length; at += 1 << 30)
      crc.update(bytes.asSlice(at, Math.min(1 << 30, length - at)).asByteBuffer());
    return crc.getValue();
  }

  private static BadInputException mismatch(Path file, long stored, long actual, String more) {
    return bad(file, "checksum mismatch: footer says 0x" + Long.toHexString(stored) + ", content has 0x"
        + Long.toHexString(actual) + " (damaged" + more + ")");
  }

  static BadInputException bad(Path file, String what) {
    return new BadInputException("index file " + file + ": " + what);
  }

  /**
   * The checked body of a file, read field by field at long offsets; every misread names the file
   * and field. Valid while the file stays mapped (the reader that opened it).
   */
  public static final class In {
    private final Path file;
    private final MemorySegment bytes;
    private FileChannel channel; // the same file, open: large arrays are read through it (see copy)
    private long pos;
    private long limit;
    private Header header;
    private CRC32 pending; // non-null: the CRC is computed as the body is read and compared in end()
    private long crcAt; // bytes [0, crcAt) are in pending
    private long stored;

    private In(Path file, MemorySegment bytes) {
      this.file = file;
      this.bytes = bytes;
      this.limit = bytes.byteSize();
    }

    public Path file() {
      return file;
    }

    /**
     * Reads large arrays through {@code ch} (the same file as the mapping, kept open by its caller;
     * null: from the mapping) and returns this reader.
     */
    public In through(FileChannel ch) {
      channel = ch;
      return this;
    }

    public Header header() {
      return header;
    }

    /** Bytes left before the footer. */
    public long remaining() {
      return limit - pos;
    }

    private long take(String field, long n) {
      if (n < 0 || n > limit - pos) throw error("ends inside field '" + field + "'");
      long at = pos;
      pos += n;
      return at;
    }

    /** Skips {@code n} bytes of field {@code field}. */
    public void skip(String field, long n) {
      take(field, n);
    }

    public int getInt(String field) {
      return bytes.get(INT, take(field, 4));
    }

    public long getLong(String field) {
      return bytes.get(LONG, take(field, 8));
    }

    public byte getByte(String field) {
      return bytes.get(ValueLayout.JAVA_BYTE, take(field, 1));
    }

    /** A count field: non-negative and at most {@code max}. */
    public int getCount(String field, long max) {
      int v = getInt(field);
      if (v < 0 || v > max) throw error("field '" + field + "' is " + v + ", allowed 0.." + max);
      return v;
    }

    public String string(String field) {
      int len = getInt(field + " length");
      if (len < 0 || len > MAX_STRING_BYTES || len > remaining())
        throw error("field '" + field + "' has impossible length " + len);
      byte[] b = new byte[len];
      MemorySegment.copy(bytes, ValueLayout.JAVA_BYTE, take(field, len), b, 0, len);
      try {
        return StandardCharsets.UTF_8.newDecoder().decode(ByteBuffer.wrap(b)).toString();
      } catch (CharacterCodingException e) {
        throw error("field '" + field + "' is not valid UTF-8");
      }
    }

    /** Reads {@code count} longs ({@code count} checked against the remaining bytes and the array limit). */
    public long[] longs(String field, long count) {
      if (count < 0 || count > remaining() / 8)
        throw error("field '" + field + "' needs " + count + " longs, " + remaining() + " bytes remain");
      if (count > Integer.MAX_VALUE - 8)
        throw error("field '" + field + "' holds " + count + " longs, more than this reader can hold in one array");
      long[] out = new long[(int) count];
      copy(field, take(field, 8 * count), MemorySegment.ofArray(out), LONG, ValueLayout.JAVA_LONG, count);
      return out;
    }

    /** Reads {@code count} ints ({@code count} checked against the remaining bytes and the array limit). */
    public int[] ints(String field, long count) {
      if (count < 0 || count > remaining() / 4)
        throw error("field '" + field + "' needs " + count + " ints, " + remaining() + " bytes remain");
      if (count > Integer.MAX_VALUE - 8)
        throw error("field '" + field + "' holds " + count + " ints, more than this reader can hold in one array");
      int[] out = new int[(int) count];
      copy(field, take(field, 4 * count), MemorySegment.ofArray(out), INT, ValueLayout.JAVA_INT, count);
      return out;
    }

    /** The next {@code length} bytes as a buffer view (position advanced past them). */
    public ByteBuffer slice(String field, int length) {
      if (length < 0 || length > remaining())
        throw error("field '" + field + "' needs " + length + " bytes, " + remaining() + " remain");
      return bytes.asSlice(take(field, length), length).asByteBuffer();
    }

    /**
     * {@code count} elements at {@code at} into {@code dst}: from the mapping when small, else by
     * positional reads of the file (a mapping's first touch of each 4 KiB page is a page fault:
     * copying a 96 MB tables file out of its mapping took 52 ms, reading it 15 ms; stop 21).
     */
    private void copy(String field, long at, MemorySegment dst, ValueLayout fileLayout, ValueLayout heapLayout, long count) {
      long len = count * fileLayout.byteSize();
      if (len < BULK_BYTES || channel == null) {
        MemorySegment.copy(bytes, fileLayout, at, dst, heapLayout, 0, count);
        return;
      }
      try (Arena arena = Arena.ofConfined()) {
        MemorySegment chunk = arena.allocate(BULK_CHUNK, 8);
        for (long done = 0; done < len; done += BULK_CHUNK) {
          int n = (int) Math.min(BULK_CHUNK, len - done);
          readFully(chunk.asSlice(0, n).asByteBuffer(), at + done, field);
          crcRead(chunk.asSlice(0, n).asByteBuffer(), at + done);
          MemorySegment.copy(chunk, fileLayout, 0, dst, heapLayout, done, n / fileLayout.byteSize());
        }
      } catch (IOException e) {
        throw new UncheckedIOException("cannot read " + file, e);
      }
    }

    /**
     * Fills {@code dst} from the file at {@code at}; a file that ends first (cut after it was opened)
     * is refused, without {@link #error}'s CRC over the mapping, whose pages past the new end fault.
     */
    private void readFully(ByteBuffer dst, long at, String field) throws IOException {
      for (long p = at; dst.hasRemaining();) {
        int r = channel.read(dst, p);
        if (r < 0) throw bad(file, "ends inside field '" + field + "'");
        p += r;
      }
    }

    /**
     * The rest of the body as a stream (consumes it): small reads from the mapping, large ones (the
     * tables payload's arrays) by positional reads of the file when it was given (see {@link #copy}).
     */
    public DataInputStream rest() {
      long from = take("body", remaining()), end = limit;
      return new DataInputStream(new InputStream() {
        private long at = from;

        @Override
        public int read() {
          return at < end ? bytes.get(ValueLayout.JAVA_BYTE, at++) & 0xff : -1;
        }

        @Override
        public int read(byte[] b, int off, int len) throws IOException {
          if (len == 0) return 0;
          if (at >= end) return -1;
          int n = (int) Math.min(len, end - at);
          if (n >= BULK_READ && channel != null) {
            readFully(ByteBuffer.wrap(b, off, n), at, "body");
            crcRead(ByteBuffer.wrap(b, off, n), at);
          } else {
            MemorySegment.copy(bytes, ValueLayout.JAVA_BYTE, at, b, off, n);
          }
          at += n;
          return n;
        }

        @Override
        public int available() {
          return (int) Math.min(Integer.MAX_VALUE, end - at);
        }
      });
    }

    /**
     * Adds {@code read}, the file's bytes from {@code at} just read into the heap, to the pending
     * CRC (first the mapping's bytes before {@code at} that no bulk read passed). Reads come in file
     * order (fields are taken in order).
     */
    private void crcRead(ByteBuffer read, long at) {
      if (pending == null) return;
      crcThrough(at);
      crcAt = at + read.remaining();
      pending.update(read);
    }

    /** Adds the mapping's bytes [crcAt, to) to the pending CRC. */
    private void crcThrough(long to) {
      for (; crcAt < to; crcAt += Math.min(1 << 30, to - crcAt))
        pending.update(bytes.asSlice(crcAt, Math.min(1 << 30, to - crcAt)).asByteBuffer());
    }

    /**
     * Checks that the body was read exactly to its end and, when the CRC was left to the reading,
     * that it matches the footer's (call after a {@link #rest()} stream is consumed).
     */
    public void end() {
      if (remaining() != 0) throw error(remaining() + " unexpected bytes before the footer");
      BadInputException damage = pending == null ? null : damage("");
      if (damage != null) throw damage;
    }

    /** Completes the pending CRC: the mismatch (with {@code more} appended to its reason), or null. */
    private BadInputException damage(String more) {
      crcThrough(bytes.byteSize() - 8);
      long actual = pending.getValue();
      pending = null;
      return actual == stored ? null : mismatch(file, stored, actual, more);
    }

    /**
     * A failure found while interpreting the body; when the CRC is still pending and the file's
     * bytes do not match it, the failure is reported as the damage it is.
     */
    public BadInputException error(String what) {
      BadInputException damage = pending == null ? null : damage("; reading it failed at: " + what);
      return damage != null ? damage : bad(file, what);
    }
  }
}
