package io.actindex.encode.io;

import io.actindex.core.OutputFiles;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.channels.FileChannel;
import java.nio.file.Path;
import java.util.Arrays;

/**
 * Writes a C-order, little-endian {@code .npy} file row chunk by row chunk, without knowing the
 * row count in advance: the header reserves room for any count and is rewritten by {@link
 * #commit()}. Data goes to a temporary file beside the target, which {@link #commit()} moves into
 * place atomically; {@link #close()} without a commit deletes it, so a failed export leaves
 * nothing behind. Not thread-safe.
 */
public final class NpyWriter implements AutoCloseable {
  private final Path target;
  private final OutputFiles.Temp tmp;
  private final FileChannel ch;
  private final NpyDtype dtype;
  private final long[] trailing;
  private final int rowValues;
  private final int headerBytes;
  private long rows;
  private boolean committed;
  private ByteBuffer buf = ByteBuffer.allocate(0);

  private NpyWriter(Path target, NpyDtype dtype, long[] trailing) throws IOException {
    this.target = target;
    this.dtype = dtype;
    this.trailing = trailing.clone();
    long rv = 1;
    for (long t : trailing) rv = Math.multiplyExact(rv, t);
    this.rowValues = Math.toIntExact(rv);
    this.tmp = OutputFiles.begin(target);
    this.ch = tmp.channel();
    this.headerBytes = header(Long.MAX_VALUE, 0).length;
    ch.write(ByteBuffer.wrap(header(0, headerBytes)), 0);
  }

  /** A writer of rows shaped {@code trailingShape} (e.g. {@code {cols}}) of type {@code dtype}. */
  public static NpyWriter create(Path file, NpyDtype dtype, long... trailingShape) throws IOException {
    return new NpyWriter(file, dtype, trailingShape);
  }

  private byte[] header(long n, int total) {
    long[] shape = new long[trailing.length + 1];
    shape[0] = n;
    System.arraycopy(trailing, 0, shape, 1, trailing.length);
    return NpyHeader.write(dtype, ByteOrder.LITTLE_ENDIAN, false, shape, total);
  }

  /** Values per row. */
  public int rowValues() {
    return rowValues;
  }

  public long rows() {
    return rows;
  }

  /** Appends {@code n} rows of raw element bytes (one-byte types: bool, int8, uint8). */
  public void writeBytes(byte[] data, int n) throws IOException {
    if (dtype.size != 1) throw new IllegalStateException("writeBytes needs a one-byte dtype, this file is " + dtype);
    put(ByteBuffer.wrap(data, 0, n * rowValues));
    rows += n;
  }

  /** Appends {@code n} rows, converting each value to the file's type (floats: nearest; ints: truncation). */
  public void write(double[] data, int n) throws IOException {
    int count = n * rowValues;
    ByteBuffer bb = buffer(count * dtype.size);
    for (int i = 0; i < count; i++) {
      double v = data[i];
      switch (dtype) {
        case FLOAT64 -> bb.putDouble(v);
        case FLOAT32 -> bb.putFloat((float) v);
        case FLOAT16 -> bb.putShort(Float.floatToFloat16((float) v));
        case BOOL -> bb.put((byte) (v != 0 ? 1 : 0));
        case INT8, UINT8 -> bb.put((byte) (long) v);
        case INT16, UINT16 -> bb.putShort((short) (long) v);
        case INT32, UINT32 -> bb.putInt((int) (long) v);
        case INT64, UINT64 -> bb.putLong((long) v);
      }
    }
    put(bb.flip());
    rows += n;
  }

  /** Appends {@code n} rows of floats. */
  public void write(float[] data, int n) throws IOException {
    if (dtype == NpyDtype.FLOAT32) {
      int count = n * rowValues;
      ByteBuffer bb = buffer(count * 4);
      bb.asFloatBuffer().put(data, 0, count);
      put(bb.limit(count * 4));
      rows += n;
      return;
    }
    double[] d = new double[n * rowValues];
    for (int i = 0; i < d.length; i++) d[i] = data[i];
    write(d, n);
  }

  private ByteBuffer buffer(int bytes) {
    if (buf.capacity() < bytes) buf = ByteBuffer.allocate(bytes).order(ByteOrder.LITTLE_ENDIAN);
    buf.clear();
    return buf;
  }

  private void put(ByteBuffer bb) throws IOException {
    while (bb.hasRemaining()) ch.write(bb, ch.size());
  }

  /** Writes the final header, syncs and moves the file into place. */
  public void commit() throws IOException {
    ch.write(ByteBuffer.wrap(header(rows, headerBytes)), 0);
    tmp.commit();
    committed = true;
  }

  /**
   * Writes the final header but leaves the file under its temporary name ({@link #path}), for an
   * archive to copy ({@link NpzWriter}); {@link #close()} deletes it.
   */
  void finish() throws IOException {
    ch.write(ByteBuffer.wrap(header(rows, headerBytes)), 0);
  }

  /** The temporary file being written. */
  Path path() {
    return tmp.path();
  }

  /** Deletes the temporary file unless {@link #commit()} ran. */
  @Override
  public void close() throws IOException {
    if (!committed) tmp.close();
  }

  @Override
  public String toString() {
    return "NpyWriter[" + target + ", " + dtype + Arrays.toString(trailing) + ", " + rows + " rows]";
  }
}
