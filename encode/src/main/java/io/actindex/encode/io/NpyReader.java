package io.actindex.encode.io;

import io.actindex.core.BadInputException;
import java.io.EOFException;
import java.io.IOException;
import java.io.InputStream;
import java.lang.invoke.MethodHandles;
import java.lang.invoke.VarHandle;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.channels.FileChannel;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;

/**
 * Streams a NumPy {@code .npy} array ({@link NpyHeader} describes the format) as a matrix of
 * {@code shape[0]} rows and {@code prod(shape[1:])} columns, each row flattened in C order (as
 * {@code a.reshape(n, -1)} does); a 1-D array is refused ({@link #oneDimensional}), since activations,
 * codes and query rows are always matrices. Holds at most one chunk (C order, about {@link #CHUNK_BYTES}) or
 * one block (Fortran order, at most {@link #BLOCK_BYTES}) of the file at a time; never
 * the whole file.
 *
 * <p>C order: a chunk of rows is one contiguous read. Fortran (column-major) order: each column of
 * a block of rows is contiguous, so a block is one positional read per column ("column-strided",
 * {@link #BLOCK_COLUMN_BYTES} per read, the block at most {@link #BLOCK_BYTES}), transposed into
 * row-major order and served from memory. An {@code .npz} member in Fortran order is first copied to a
 * spill file ({@link SpillFiles}; a deflated stream cannot seek), which is deleted on close.
 *
 * <p>The header must agree with the data size: a shorter file is "truncated", a longer one
 * "disagrees with the file size". Not thread-safe.
 */
public final class NpyReader implements MatrixReader {
  /** Bytes read per I/O call (about). */
  public static final int CHUNK_BYTES = 1 << 20;

  private final String name;
  private final NpyHeader header;
  private final FileChannel channel; // null for a sequential stream
  private final InputStream stream; // null for a file
  private final Path tempFile; // spilled npz member, deleted on close
  private final int cols;
  private final long[] colOffset; // Fortran order: element offset of column c's first row
  private long streamPos; // bytes consumed from stream
  private long row;
  private ByteBuffer buf = ByteBuffer.allocateDirect(0);
  private int[] bits = new int[0]; // float32 raw bits, for the vectorizable finite check
  /** Fortran order: bytes per column read, and bytes of the transposed row block (at most). */
  static final long BLOCK_COLUMN_BYTES = 64 << 10, BLOCK_BYTES = 64 << 20;
  private byte[] block; // Fortran order: rows [blockStart, blockStart + blockRows) in row-major order
  private long blockStart;
  private int blockRows;

  private NpyReader(String name, NpyHeader header, FileChannel channel, InputStream stream, long streamPos, Path tempFile) {
    this.name = name;
    this.header = header;
    this.channel = channel;
    this.stream = stream;
    this.streamPos = streamPos;
    this.tempFile = tempFile;
    if (header.shape().length == 1) throw oneDimensional(name, header.shape()[0]);
    long c = header.cols();
    if (c == 0) throw new BadInputException(name + ": field 'shape' " + header.shapeString() + " has no columns");
    if (c > Integer.MAX_VALUE / 8) throw new BadInputException(name + ": field 'shape' " + header.shapeString() + ": too many columns per row");
    this.cols = (int) c;
    this.colOffset = header.fortranOrder() && cols > 1 ? fortranOffsets(header.shape()) : null;
  }

  /** Opens a {@code .npy} file; checks its header against its size. */
  public static NpyReader open(Path file) throws IOException {
    String name = file.toString();
    FileChannel ch = FileChannel.open(file, StandardOpenOption.READ);
    try {
      long size = ch.size();
      byte[] head = readHead(name, size, (dst, pos) -> readFully(ch, dst, pos, name));
      NpyHeader h = NpyHeader.parse(head, head.length, name);
      checkSize(name, h, size);
      return new NpyReader(name, h, ch, null, 0, null);
    } catch (RuntimeException | IOException e) {
      ch.close();
      throw e;
    }
  }

  /**
   * Opens an array from a sequential stream (an {@code .npz} member) of {@code size} bytes (-1 if
   * unknown). {@code name} is used in messages. Takes ownership of the stream.
   */
  public static NpyReader open(String name, InputStream in, long size) throws IOException {
    try {
      long[] consumed = {0};
      byte[] head = readHead(name, size, (dst, pos) -> {
        int n = in.readNBytes(dst.array(), dst.position(), dst.remaining());
        if (n < dst.remaining()) throw new EOFException();
        consumed[0] += n;
      });
      NpyHeader h = NpyHeader.parse(head, head.length, name);
      if (size >= 0) checkSize(name, h, size);
      if (!h.fortranOrder() || h.cols() <= 1) return new NpyReader(name, h, null, in, consumed[0], null);
      Path tmp = SpillFiles.create();
      try (in) {
        Files.write(tmp, head);
        try (var out = Files.newOutputStream(tmp, StandardOpenOption.APPEND)) {
          in.transferTo(out);
        }
        NpyReader r = open(tmp);
        checkSize(name, h, Files.size(tmp));
        return new NpyReader(name, r.header, r.channel, null, 0, tmp);
      } catch (RuntimeException | IOException e) {
        Files.deleteIfExists(tmp);
        throw e;
      }
    } catch (RuntimeException | IOException e) {
      in.close();
      throw e;
    }
  }

  private interface PositionalRead {
    void read(ByteBuffer dst, long pos) throws IOException;
  }

  private static byte[] readHead(String name, long size, PositionalRead src) throws IOException {
    long avail = size < 0 ? Long.MAX_VALUE : size;
    int pre = (int) Math.min(NpyHeader.PREAMBLE, avail);
    ByteBuffer p = ByteBuffer.allocate(pre);
    try {
      src.read(p, 0);
    } catch (EOFException e) {
      throw new BadInputException(name + ": not a NumPy .npy file (too short)");
    }
    long end = NpyHeader.headerEnd(p.array(), pre, name);
    if (end > avail) throw new BadInputException(name + ": truncated .npy header (needs " + end + " bytes, the file has " + size + ")");
    if (end < pre) throw new BadInputException(name + ": .npy header length " + (end - 10) + " is too short for the header dict");
    ByteBuffer all = ByteBuffer.allocate((int) end);
    all.put(p.array(), 0, pre);
    try {
      src.read(all, pre);
    } catch (EOFException e) {
      throw new BadInputException(name + ": truncated .npy header (needs " + end + " bytes)");
    }
    return all.array();
  }

  private static void checkSize(String name, NpyHeader h, long size) {
    long need = h.dataOffset() + h.dataBytes();
    if (size < need)
      throw new BadInputException(name + ": truncated: header shape " + h.shapeString() + " of " + h.dtype().descr(h.order())
          + " needs " + need + " bytes, the file has " + size);
    if (size > need)
      throw new BadInputException(name + ": header disagrees with the file size: shape " + h.shapeString() + " of "
          + h.dtype().descr(h.order()) + " needs " + need + " bytes, the file has " + size);
  }

  private static void readFully(FileChannel ch, ByteBuffer dst, long pos, String name) throws IOException {
    while (dst.hasRemaining()) {
      int n = ch.read(dst, pos);
      if (n < 0) throw new BadInputException(name + ": truncated: unexpected end of file at byte " + pos);
      pos += n;
    }
  }

  private static long[] fortranOffsets(long[] shape) {
    int k = shape.length - 1;
    long n = shape[0];
    int cols = 1;
    for (int i = 1; i < shape.length; i++) cols *= (int) shape[i];
    long[] off = new long[cols];
    int[] j = new int[k];
    for (int c = 0; c < cols; c++) {
      // Fortran linear index of (0, j1..jk) = n * (j1 + s1 * (j2 + s2 * ...))
      long f = 0;
      for (int d = k - 1; d >= 0; d--) f = f * shape[d + 1] + j[d];
      off[c] = f * n;
      for (int d = k - 1; d >= 0; d--) { // C-order increment: last index fastest
        if (++j[d] < shape[d + 1]) break;
        j[d] = 0;
      }
    }
    return off;
  }

  public NpyHeader header() {
    return header;
  }

  @Override
  public String source() {
    return name;
  }

  @Override
  public long rows() {
    return header.rows();
  }

  @Override
  public int cols() {
    return cols;
  }

  @Override
  public boolean exactInFloat() {
    return header.dtype().exactInFloat;
  }

  @Override
  public long position() {
    return row;
  }

  @Override
  public int read(float[] out, int maxRows) throws IOException {
    if (!exactInFloat()) throw new IllegalStateException(name + ": " + header.dtype() + " values are not exact as float");
    return read(out, null, maxRows);
  }

  @Override
  public int read(double[] out, int maxRows) throws IOException {
    return read(null, out, maxRows);
  }

  /**
   * Reads up to {@code maxRows} rows of a one-byte dtype (bool, int8, uint8) into {@code out} as
   * the file's raw bytes, row-major ({@code cols()} per row), without converting them to numbers:
   * the fast path for codes files. Returns the rows read (0 at the end).
   */
  public int readBytes(byte[] out, int maxRows) throws IOException {
    if (header.dtype().size != 1) throw new IllegalStateException(name + ": " + header.dtype() + " values are not one byte each");
    return read(null, null, out, maxRows);
  }

  private int read(float[] fo, double[] dout, int maxRows) throws IOException {
    return read(fo, dout, null, maxRows);
  }

  private int read(float[] fo, double[] dout, byte[] raw, int maxRows) throws IOException {
    int total = (int) Math.min(maxRows, header.rows() - row);
    if (total <= 0) return 0;
    int size = header.dtype().size;
    long rowBytes = (long) cols * size;
    int done = 0;
    while (done < total) {
      int m;
      if (colOffset == null) {
        m = (int) Math.max(1, Math.min(total - done, CHUNK_BYTES / rowBytes));
        ByteBuffer bb = buffer((int) (m * rowBytes));
        fill(bb, header.dataOffset() + row * rowBytes);
        if (header.dtype() == NpyDtype.FLOAT32) checkFinite32(bb, m * cols, row);
        if (raw != null) bb.get(0, raw, done * cols, m * cols);
        else decode(bb, m * cols, fo, dout, done * cols, 1);
      } else {
        int at = ensureBlock(rowBytes, size);
        m = Math.min(total - done, blockRows - at);
        if (raw != null) {
          System.arraycopy(block, (int) (at * rowBytes), raw, done * cols, (int) (m * rowBytes));
        } else {
          ByteBuffer bb = ByteBuffer.wrap(block, (int) (at * rowBytes), (int) (m * rowBytes)).slice().order(header.order());
          decode(bb, m * cols, fo, dout, done * cols, 1);
        }
      }
      if (header.dtype().isFloat() && (colOffset != null || header.dtype() != NpyDtype.FLOAT32))
        checkFinite(fo, dout, done * cols, (done + m) * cols, row - done);
      row += m;
      done += m;
    }
    return total;
  }

  /**
   * Fortran order: makes sure the row-major block holds row {@code row}, loading a block of rows
   * with one positional read per column (each at least tens of KiB long for typical widths) and
   * transposing it. Returns the index of {@code row} in the block.
   */
  private int ensureBlock(long rowBytes, int size) throws IOException {
    if (block != null && row >= blockStart && row < blockStart + blockRows) return (int) (row - blockStart);
    long cap = Math.max(1, Math.min(BLOCK_COLUMN_BYTES / size, BLOCK_BYTES / rowBytes));
    int b = (int) Math.min(cap, header.rows() - row);
    if (block == null || block.length < b * rowBytes) block = new byte[(int) (b * rowBytes)];
    ByteBuffer col = buffer(b * size);
    byte[] tmp = new byte[b * size];
    for (int c = 0; c < cols; c++) {
      col.clear().limit(b * size);
      fill(col, header.dataOffset() + (colOffset[c] + row) * size);
      col.get(0, tmp, 0, b * size);
      transpose(tmp, b, size, c * size, (int) rowBytes);
    }
    blockStart = row;
    blockRows = b;
    return 0;
  }

  private static final VarHandle I16 = MethodHandles.byteArrayViewVarHandle(short[].class, ByteOrder.LITTLE_ENDIAN);
  private static final VarHandle I32 = MethodHandles.byteArrayViewVarHandle(int[].class, ByteOrder.LITTLE_ENDIAN);
  private static final VarHandle I64 = MethodHandles.byteArrayViewVarHandle(long[].class, ByteOrder.LITTLE_ENDIAN);

  /** Copies {@code b} elements of {@code size} bytes from a column into the block at stride {@code rowBytes}, bytes unchanged. */
  private void transpose(byte[] col, int b, int size, int first, int rowBytes) {
    switch (size) {
      case 1 -> { for (int i = 0, d = first; i < b; i++, d += rowBytes) block[d] = col[i]; }
      case 2 -> { for (int i = 0, d = first; i < b; i++, d += rowBytes) I16.set(block, d, (short) I16.get(col, i << 1)); }
      case 4 -> { for (int i = 0, d = first; i < b; i++, d += rowBytes) I32.set(block, d, (int) I32.get(col, i << 2)); }
      case 8 -> { for (int i = 0, d = first; i < b; i++, d += rowBytes) I64.set(block, d, (long) I64.get(col, i << 3)); }
      default -> throw new IllegalStateException("element size " + size);
    }
  }

  private void decode(ByteBuffer bb, int count, float[] fo, double[] dout, int off, int stride) {
    if (fo != null) header.dtype().decode(bb, count, fo, off, stride);
    else header.dtype().decode(bb, count, dout, off, stride);
  }

  private ByteBuffer buffer(int bytes) {
    if (buf.capacity() < bytes) buf = channel != null ? ByteBuffer.allocateDirect(bytes) : ByteBuffer.allocate(bytes);
    buf.clear().limit(bytes);
    buf.order(header.order());
    return buf;
  }

  private void fill(ByteBuffer bb, long pos) throws IOException {
    if (channel != null) {
      readFully(channel, bb, pos, name);
    } else {
      if (pos != streamPos) throw new IllegalStateException("sequential read out of order");
      int want = bb.remaining();
      int n = stream.readNBytes(bb.array(), bb.position(), want);
      streamPos += n;
      if (n < want) throw new BadInputException(name + ": truncated: data ends at byte " + streamPos + " in row " + (row));
      bb.position(bb.limit());
    }
    bb.flip();
  }

  /**
   * Checks {@code count} float32 values in {@code bb} by their raw bits (exponent all ones = NaN or
   * infinity), in a loop over an int[] that the JIT vectorizes; {@code firstRow} is the row of
   * value 0.
   */
  private void checkFinite32(ByteBuffer bb, int count, long firstRow) {
    if (bits.length < count) bits = new int[count];
    bb.asIntBuffer().get(0, bits, 0, count);
    int acc = 0;
    for (int i = 0; i < count; i++) acc |= (bits[i] & 0x7f800000) + 0x00800000;
    if (acc >= 0) return;
    for (int i = 0; i < count; i++)
      if ((bits[i] & 0x7f800000) == 0x7f800000) throw nonFinite(name, firstRow + i / cols, i % cols, Float.intBitsToFloat(bits[i]));
  }

  /** Throws on the first NaN or infinite value in {@code [from, to)}; {@code firstRow} is the row of index 0. */
  private void checkFinite(float[] f, double[] d, int from, int to, long firstRow) {
    int bad = -1;
    if (f != null) {
      int acc = 0;
      for (int i = from; i < to; i++) acc |= (Float.floatToRawIntBits(f[i]) & 0x7f800000) + 0x00800000;
      if (acc < 0) for (int i = from; i < to && bad < 0; i++) if (!Float.isFinite(f[i])) bad = i;
    } else {
      long acc = 0;
      for (int i = from; i < to; i++) acc |= (Double.doubleToRawLongBits(d[i]) & 0x7ff0000000000000L) + 0x0010000000000000L;
      if (acc < 0) for (int i = from; i < to && bad < 0; i++) if (!Double.isFinite(d[i])) bad = i;
    }
    if (bad >= 0) {
      double v = f != null ? f[bad] : d[bad];
      throw nonFinite(name, firstRow + bad / cols, bad % cols, v);
    }
  }

  /**
   * A 1-D array is refused rather than read as n rows of one column: for activations, codes or
   * query rows it is nearly always one example saved without its batch axis, or a flat vector.
   */
  static BadInputException oneDimensional(String file, long n) {
    return new BadInputException(file + ": field 'shape' (" + n + ",) is a 1-D array, but rows (examples) by columns (units) are needed: save it as shape (1, "
        + n + ") for one row (a.reshape(1, -1)), or (" + n + ", 1) for one column (a.reshape(-1, 1))"
        + (file.endsWith("]") ? "; or, if this member of the archive is not a layer (labels, ids), name the layers to read with `layers`" : ""));
  }

  static BadInputException nonFinite(String file, long row, int col, double v) {
    return new BadInputException(file + ": row " + row + ", column " + col + " (0-based): value is "
        + (Double.isNaN(v) ? "NaN" : v > 0 ? "+infinity" : "-infinity") + "; only finite numbers are accepted");
  }

  @Override
  public void close() throws IOException {
    try {
      if (channel != null) channel.close();
      if (stream != null) stream.close();
    } finally {
      if (tempFile != null) Files.deleteIfExists(tempFile);
    }
  }
}
