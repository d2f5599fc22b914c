package io.actindex.index.store;

import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.List;
import java.util.UUID;

/**
 * The float vectors of a segment's examples (e.g. a model's hidden activations), kept beside the
 * codes in a quantised form: per unit (column) {@code j} an offset {@code lo[j]} (the column's
 * minimum) and a step {@code step[j] = (max - lo) / (2^bits - 1)}; a value is stored as
 * {@code q = round((v - lo) / step)} in {@code bits} bits and read back as {@code lo + q * step},
 * so the error per value is at most {@code step / 2} (plus float rounding). A column's minimum is
 * exact (ReLU zeros stay zero). Immutable, thread-safe.
 *
 * <p>File, a {@link ChecksummedFile} beside the segment's codes; body big-endian:
 * <pre>
 * seg-S.mags  codec "actindex.magnitudes", version 1
 *   int    segmentId S
 *   int    count n (equals the segment's code count)
 *   int    units d (equals the layout's bits: one unit per code bit)
 *   byte   bits per value b: 2, 4 or 8
 *   float  d offsets lo[j], then float d steps step[j] (finite, step &gt;= 0)
 *   bytes  n rows of ceil(d*b/8) bytes; unit j of a row in byte j/(8/b), bits (j%(8/b))*b
 *          upward (low bits first); bits past unit d-1 in a row's last byte are zero
 * </pre>
 */
public final class Magnitudes {
  public static final String CODEC = "actindex.magnitudes";
  static final int VERSION_START = 1, VERSION_CURRENT = 1;

  private final int count, units, bits, rowBytes;
  private final float[] lo, step;
  private final byte[] data;

  private Magnitudes(int count, int units, int bits, float[] lo, float[] step, byte[] data) {
    checkBits(bits);
    this.count = count;
    this.units = units;
    this.bits = bits;
    this.rowBytes = rowBytes(units, bits);
    this.lo = lo;
    this.step = step;
    this.data = data;
  }

  /** True for the supported widths 2, 4 and 8. */
  public static boolean supported(int bits) {
    return bits == 2 || bits == 4 || bits == 8;
  }

  private static void checkBits(int bits) {
    if (!supported(bits)) throw new IllegalArgumentException("bits per value must be 2, 4 or 8, got " + bits);
  }

  /** Bytes per stored row. */
  public static int rowBytes(int units, int bits) {
    int perByte = 8 / bits;
    return (units + perByte - 1) / perByte;
  }

  public static String fileName(int segmentId) {
    return "seg-" + segmentId + ".mags";
  }

  /**
   * Quantises {@code n} rows of {@code units} finite values ({@code values} row-major) to
   * {@code bits} bits each, with each column's range taken from these rows.
   */
  public static Magnitudes quantise(float[] values, int n, int units, int bits) {
    checkBits(bits);
    if ((long) n * units != values.length)
      throw new IllegalArgumentException(values.length + " values for " + n + " rows of " + units);
    float[] lo = new float[units], hi = new float[units];
    Arrays.fill(lo, Float.POSITIVE_INFINITY);
    Arrays.fill(hi, Float.NEGATIVE_INFINITY);
    for (int i = 0; i < n; i++)
      for (int j = 0; j < units; j++) {
        float v = values[i * units + j];
        if (!Float.isFinite(v)) throw new IllegalArgumentException("value " + v + " at row " + i + ", unit " + j);
        if (v < lo[j]) lo[j] = v;
        if (v > hi[j]) hi[j] = v;
      }
    return quantise(values, n, units, bits, lo, hi);
  }

  private static Magnitudes quantise(float[] values, int n, int units, int bits, float[] lo, float[] hi) {
    int levels = (1 << bits) - 1;
    float[] step = new float[units];
    float[] offset = new float[units];
    for (int j = 0; j < units; j++) {
      if (n == 0) continue;
      offset[j] = lo[j];
      step[j] = (float) (((double) hi[j] - lo[j]) / levels);
    }
    int rb = rowBytes(units, bits), perByte = 8 / bits;
    byte[] data = new byte[Math.multiplyExact(n, rb)];
    for (int i = 0; i < n; i++)
      for (int j = 0; j < units; j++) {
        int q = 0;
        if (step[j] > 0) {
          long r = Math.round(((double) values[i * units + j] - offset[j]) / step[j]);
          q = (int) Math.max(0, Math.min(levels, r));
        }
        data[i * rb + j / perByte] |= (byte) (q << ((j % perByte) * bits));
      }
    return new Magnitudes(n, units, bits, offset, step, data);
  }

  public int count() {
    return count;
  }

  public int units() {
    return units;
  }

  public int bits() {
    return bits;
  }

  /** Bytes of the stored rows (offsets and steps left out). */
  public long dataBytes() {
    return data.length;
  }

  /** The largest error of one dequantised value of unit {@code j}: half its step. */
  public float maxError(int j) {
    return step[j] / 2;
  }

  /** Writes the dequantised row {@code ord} to {@code out[off .. off+units)}. */
  public void dequantise(int ord, float[] out, int off) {
    int base = ord * rowBytes;
    if (bits == 8) {
      for (int j = 0; j < units; j++) out[off + j] = lo[j] + (data[base + j] & 0xff) * step[j];
      return;
    }
    // 2 or 4 bits: unit j in byte j >>> perByteShift at bit (j & (perByte-1)) * bits; shifts, no division
    int perByteShift = bits == 4 ? 1 : 2, slotMask = (1 << perByteShift) - 1, bitShift = bits == 4 ? 2 : 1, mask = (1 << bits) - 1;
    for (int j = 0; j < units; j++) {
      int q = (data[base + (j >>> perByteShift)] >>> ((j & slotMask) << bitShift)) & mask;
      out[off + j] = lo[j] + q * step[j];
    }
  }

  /** The dequantised row {@code ord}. */
  public float[] row(int ord) {
    float[] out = new float[units];
    dequantise(ord, out, 0);
    return out;
  }

  /**
   * The rows {@code ords[p]} of {@code parts.get(p)}, in that order, as one set (compaction). Parts
   * with the same bits, offsets and steps are copied byte for byte; otherwise the rows are
   * dequantised and quantised again, with the largest bits of the parts, over the union of the
   * parts' ranges (error at most half the old step plus half the new one).
   */
  public static Magnitudes merge(List<Magnitudes> parts, List<int[]> ords) {
    if (parts.isEmpty()) throw new IllegalArgumentException("nothing to merge");
    Magnitudes first = parts.getFirst();
    int units = first.units, bits = first.bits, n = 0;
    boolean same = true;
    for (Magnitudes m : parts) {
      if (m.units != units) throw new IllegalArgumentException("cannot merge magnitudes of " + m.units + " and " + units + " units");
      same &= m.bits == first.bits && Arrays.equals(m.lo, first.lo) && Arrays.equals(m.step, first.step);
      bits = Math.max(bits, m.bits);
    }
    for (int[] o : ords) n = Math.addExact(n, o.length);
    int rb = first.rowBytes;
    if (same) {
      byte[] data = new byte[Math.multiplyExact(n, rb)];
      int at = 0;
      for (int p = 0; p < parts.size(); p++)
        for (int o : ords.get(p)) System.arraycopy(parts.get(p).data, o * rb, data, (at++) * rb, rb);
      return new Magnitudes(n, units, bits, first.lo.clone(), first.step.clone(), data);
    }
    float[] values = new float[Math.multiplyExact(n, units)];
    float[] lo = new float[units], hi = new float[units];
    Arrays.fill(lo, Float.POSITIVE_INFINITY);
    Arrays.fill(hi, Float.NEGATIVE_INFINITY);
    int at = 0;
    for (int p = 0; p < parts.size(); p++) {
      Magnitudes m = parts.get(p);
      for (int o : ords.get(p)) m.dequantise(o, values, (at++) * units);
      if (ords.get(p).length == 0) continue;
      for (int j = 0; j < units; j++) {
        lo[j] = Math.min(lo[j], m.lo[j]);
        hi[j] = Math.max(hi[j], m.lo[j] + ((1 << m.bits) - 1) * m.step[j]);
      }
    }
    return quantise(values, n, units, bits, lo, hi);
  }

  /** Writes {@code m} as the magnitudes file of segment {@code segmentId}. */
  static FileRef write(StoreIo io, Path dir, UUID uuid, int layoutHash, int segmentId, Magnitudes m) throws IOException {
    try (ChecksummedFile.Out out = ChecksummedFile.create(io, dir.resolve(fileName(segmentId)), CODEC, VERSION_CURRENT,
        layoutHash, uuid)) {
      out.writeInt(segmentId);
      out.writeInt(m.count);
      out.writeInt(m.units);
      out.writeByte(m.bits);
      for (float v : m.lo) out.writeFloat(v);
      for (float v : m.step) out.writeFloat(v);
      out.write(m.data);
      return out.finish();
    }
  }

  /** Reads and checks the magnitudes file of manifest segment {@code e}. */
  static Magnitudes read(Path dir, FileSource src, Manifest m, Manifest.SegmentEntry e, FileRef ref,
      ChecksummedFile.Check level) {
    Path file = dir.resolve(ref.name());
    ChecksummedFile.In in = ChecksummedFile.check(file, src.bytes(file), CODEC, VERSION_START, VERSION_CURRENT,
        m.layout().hash(), m.uuid(), ref, level);
    int segId = in.getInt("segmentId");
    if (segId != e.segmentId()) throw in.error("segmentId is " + segId + ", the manifest says " + e.segmentId());
    int n = in.getCount("count", Integer.MAX_VALUE);
    if (n != e.count()) throw in.error("holds " + n + " rows, the segment holds " + e.count() + " codes");
    int units = in.getInt("units");
    if (units != m.layout().bits()) throw in.error("has " + units + " units per row, the layout has " + m.layout().bits() + " bits");
    int bits = in.getByte("bits per value");
    if (!supported(bits)) throw in.error("bits per value is " + bits + " (2, 4 or 8 expected)");
    float[] lo = floats(in, "offsets", units), step = floats(in, "steps", units);
    for (int j = 0; j < units; j++)
      if (!Float.isFinite(lo[j]) || !Float.isFinite(step[j]) || step[j] < 0)
        throw in.error("unit " + j + " has offset " + lo[j] + " and step " + step[j]);
    int rb = rowBytes(units, bits);
    long len = Math.multiplyExact((long) n, rb);
    if (len > Integer.MAX_VALUE - 16) throw in.error(n + " rows of " + rb + " bytes do not fit one array");
    ByteBuffer body = in.slice("rows", (int) len);
    in.end();
    byte[] data = new byte[(int) len];
    body.get(data);
    int used = units % (8 / bits) * bits;
    if (used != 0)
      for (int i = 0; i < n; i++)
        if ((data[i * rb + rb - 1] & 0xff) >>> used != 0) throw in.error("row " + i + " has bits set past its last unit");
    return new Magnitudes(n, units, bits, lo, step, data);
  }

  private static float[] floats(ChecksummedFile.In in, String field, int count) {
    int[] raw = in.ints(field, count);
    float[] out = new float[count];
    for (int i = 0; i < count; i++) out[i] = Float.intBitsToFloat(raw[i]);
    return out;
  }
}
