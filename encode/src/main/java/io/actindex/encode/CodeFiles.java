package io.actindex.encode;

import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyReader;
import io.actindex.encode.io.NpyWriter;
import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import java.io.IOException;
import java.lang.invoke.MethodHandles;
import java.lang.invoke.VarHandle;
import java.nio.ByteOrder;
import java.nio.file.Path;

/**
 * Pre-binarized codes as {@code .npy} files, both directions. Two forms:
 *
 * <ul>
 *   <li>unpacked: shape {@code (n, bits)}, dtype bool, or 0/1 in any integer or float dtype (as
 *       {@code (acts > 0).astype(int)} or a float tensor of codes saves them; any other value is
 *       refused); bit {@code b} of a code is column {@code b};
 *   <li>packed: shape {@code (n, ceil(bits/8))}, dtype uint8, NumPy {@code packbits} order (the
 *       default {@code bitorder='big'}): bit {@code b} of a code is bit {@code 7 - (b % 8)} (most
 *       significant first) of byte {@code b / 8}; padding bits of the last byte are zero.
 * </ul>
 *
 * A uint8 file is read as packed when a layout is given and the column count is {@code
 * ceil(bits/8) != bits}; otherwise as unpacked.
 */
public final class CodeFiles {
  private CodeFiles() {}

  /** Opens a codes file; {@code layout} null = one segment {@code "code"} of the file's width (unpacked only). */
  public static CodeStream read(Path file, CodeLayout layout) throws IOException {
    NpyReader r = NpyReader.open(file);
    try {
      NpyDtype t = r.header().dtype();
      boolean packed = false, given = layout != null;
      if (layout == null) {
        layout = CodeLayout.single("code", r.cols());
      } else if (r.cols() != layout.bits()) {
        if (t == NpyDtype.UINT8 && r.cols() == (layout.bits() + 7) / 8) packed = true;
        else
          throw new BadInputException(file + ": field 'shape' " + r.header().shapeString() + " does not match the layout " + layout + " ("
              + layout.bits() + " bits: " + layout.bits() + " columns of 0/1, or " + (layout.bits() + 7) / 8 + " packed bytes)");
      }
      return new Stream(r, layout, packed, given);
    } catch (RuntimeException e) {
      r.close();
      throw e;
    }
  }

  private static final VarHandle LE = MethodHandles.byteArrayViewVarHandle(long[].class, ByteOrder.LITTLE_ENDIAN);

  private static final class Stream implements CodeStream {
    private final NpyReader r;
    private final CodeLayout layout;
    private final boolean packed, layoutGiven;
    private final NeuronStats stats;
    private byte[] buf = new byte[0];
    private double[] values = new double[0]; // dtypes other than bool and uint8, read as numbers

    Stream(NpyReader r, CodeLayout layout, boolean packed, boolean layoutGiven) {
      this.r = r;
      this.layout = layout;
      this.packed = packed;
      this.layoutGiven = layoutGiven;
      this.stats = new NeuronStats(layout);
    }

    @Override
    public CodeLayout layout() {
      return layout;
    }

    @Override
    public long rows() {
      return r.rows();
    }

    @Override
    public CodeBlock next(int maxRows) throws IOException {
      CodeStream.checkMaxRows(maxRows);
      int cols = r.cols(), words = layout.words();
      int m = Math.min(maxRows, Math.max(1, (1 << 20) / cols));
      NpyDtype t = r.header().dtype();
      boolean bytes = t == NpyDtype.BOOL || t == NpyDtype.UINT8;
      long first = r.position();
      if (bytes) {
        if (buf.length < m * cols) buf = new byte[m * cols];
        m = r.readBytes(buf, m);
      } else {
        if (values.length < m * cols) values = new double[m * cols];
        m = r.read(values, m);
      }
      if (m == 0) return null;
      long[] out = new long[m * words];
      for (int i = 0; i < m; i++) {
        if (packed) packRow(buf, i * cols, cols, out, i * words, first + i);
        else if (bytes) unpackedRow(buf, i * cols, cols, t == NpyDtype.BOOL, out, i * words, first + i);
        else numberRow(values, i * cols, cols, out, i * words, first + i);
      }
      CodeBlock b = new CodeBlock(layout, m, out);
      stats.add(b);
      return b;
    }

    /**
     * One row of 0/1 bytes (bool: any non-zero byte is 1) to code bits, eight bytes at a time: with
     * each byte 0 or 1, multiplying by {@code 0x0102040810204080} gathers byte j's bit at bit 56 + j
     * (no two partial products meet there and nothing carries into it) -- common practice.
     */
    private void unpackedRow(byte[] b, int off, int cols, boolean bool, long[] out, int at, long row) {
      int c = 0;
      for (; c + 8 <= cols; c += 8) {
        long x = (long) LE.get(b, off + c);
        if (bool) x = ((((x & 0x7F7F7F7F7F7F7F7FL) + 0x7F7F7F7F7F7F7F7FL) | x) >>> 7) & 0x0101010101010101L;
        else if ((x & 0xFEFEFEFEFEFEFEFEL) != 0) throw notBinary(b, off, c, row);
        out[at + (c >>> 6)] |= ((x * 0x0102040810204080L) >>> 56) << (c & 63);
      }
      for (; c < cols; c++) {
        int v = b[off + c] & 0xff;
        if (bool) v = v != 0 ? 1 : 0;
        else if (v > 1) throw notBinary(b, off, c, row);
        out[at + (c >>> 6)] |= (long) v << (c & 63);
      }
    }

    /** One row of 0/1 numbers (any other value is refused) to code bits. */
    private void numberRow(double[] v, int off, int cols, long[] out, int at, long row) {
      for (int c = 0; c < cols; c++) {
        double x = v[off + c];
        if (x != 0 && x != 1) {
          String value = x == Math.rint(x) && Math.abs(x) < 1e15 ? Long.toString((long) x) : Double.toString(x);
          throw new BadInputException(r.source() + ": row " + row + ", column " + c + ": value " + value + " is not 0 or 1 (a codes file holds"
              + " bool or 0/1 values; activations are another input)");
        }
        if (x == 1) out[at + (c >>> 6)] |= 1L << (c & 63);
      }
    }

    private BadInputException notBinary(byte[] b, int off, int from, long row) {
      int c = from;
      while ((b[off + c] & 0xff) <= 1) c++;
      // with a layout, one column per bit is read as 0/1 values; for a 1-bit code packed bytes have that shape too
      String why = !layoutGiven ? "packed bytes need the code layout"
          : layout.bits() == 1 ? "a 1-bit code is one column whether packed or not, so it is read as 0/1 values: save it unpacked"
          : "one column per bit of the layout " + layout + " is read as 0/1 values, not packed bytes";
      return new BadInputException(r.source() + ": row " + row + ", column " + c + ": value " + (b[off + c] & 0xff)
          + " is not 0 or 1 (" + why + ")");
    }

    /** One row of packbits bytes (most significant bit first) to code bits: byte c holds bits 8c..8c+7. */
    private void packRow(byte[] b, int off, int cols, long[] out, int at, long row) {
      int c = 0;
      for (; c + 8 <= cols; c += 8) out[at + (c >>> 3)] = Long.reverseBytes(Long.reverse((long) LE.get(b, off + c)));
      for (; c < cols; c++) out[at + (c >>> 3)] |= (long) (Integer.reverse(b[off + c] & 0xff) >>> 24) << ((c & 7) << 3);
      int bits = layout.bits(), last = at + layout.words() - 1;
      long ghost = (bits & 63) == 0 ? 0 : out[last] & (-1L << (bits & 63));
      if (ghost != 0) {
        int bit = ((layout.words() - 1) << 6) + Long.numberOfTrailingZeros(ghost);
        throw new BadInputException(r.source() + ": row " + row + ", column " + (bit >>> 3) + ": padding bit " + (bit & 7)
            + " (code bit " + bit + ") is set but the layout has " + bits + " bits (packed with np.packbits(..., bitorder='little')?"
            + " packed codes are read in NumPy's default order, bitorder='big': most significant bit first)");
      }
    }

    @Override
    public NeuronStats stats() {
      return stats;
    }

    @Override
    public void close() throws IOException {
      r.close();
    }
  }

  /** Packs codes {@code [0, n)} into NumPy packbits bytes, {@code ceil(bits/8)} per row. */
  public static byte[] pack(CodeBlock codes) {
    int bits = codes.layout().bits(), bytes = (bits + 7) / 8, words = codes.wordsPerCode();
    long[] w = codes.words();
    byte[] out = new byte[codes.size() * bytes];
    for (int i = 0; i < codes.size(); i++)
      for (int b = 0; b < bits; b++)
        if ((w[i * words + (b >>> 6)] >>> (b & 63) & 1) != 0) out[i * bytes + (b >>> 3)] |= (byte) (0x80 >>> (b & 7));
    return out;
  }

  /** Unpacks codes into one 0/1 byte per bit, {@code bits} per row. */
  public static byte[] unpack(CodeBlock codes) {
    int bits = codes.layout().bits();
    byte[] out = new byte[codes.size() * bits];
    for (int i = 0; i < codes.size(); i++)
      for (int b = 0; b < bits; b++) out[i * bits + b] = (byte) (codes.bit(i, b) ? 1 : 0);
    return out;
  }

  /** How codes are written. */
  public enum Form {
    /** uint8, packbits order. */
    PACKED,
    /** bool, one per bit. */
    BOOL,
    /** uint8 0/1, one per bit. */
    UINT8
  }

  /**
   * Writes every remaining code of {@code codes} to {@code file} in {@code form}; atomic (nothing
   * is left behind on failure). Returns the rows written.
   */
  public static long write(Path file, CodeStream codes, Form form) throws IOException {
    int bits = codes.layout().bits();
    try (NpyWriter w = form == Form.PACKED
        ? NpyWriter.create(file, NpyDtype.UINT8, (bits + 7) / 8)
        : NpyWriter.create(file, form == Form.BOOL ? NpyDtype.BOOL : NpyDtype.UINT8, bits)) {
      CodeBlock b;
      while ((b = codes.next(8192)) != null) w.writeBytes(form == Form.PACKED ? pack(b) : unpack(b), b.size());
      w.commit();
      return w.rows();
    }
  }
}
