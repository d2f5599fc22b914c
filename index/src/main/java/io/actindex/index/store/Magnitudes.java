package io.actindex.index.store;

import io.actindex.core.BadParameterException;
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
 * Version 2 (written only for more than one block) keeps several quantisations, one per block of
 * consecutive rows, so that merging segments of the same bits copies their rows unchanged: after
 * the bits byte {@code int} blocks B (at least 2), B {@code int}s the first row of each block (0,
 * then strictly ascending, below n), then per block d offsets and d steps; the rows as above, each
 * read with its block's offsets and steps.
 */
public final class Magnitudes {
  public static final String CODEC = "actindex.magnitudes";
  static final int VERSION_START = 1, VERSION_CURRENT = 2;

  private final int count, units, bits, rowBytes;
  /** First row of each block; block b's offsets and steps are {@code lo, step[b*units .. (b+1)*units)}. */
  private final int[] starts;
  private final float[] lo, step;
  private final byte[] data;

  private Magnitudes(int count, int units, int bits, int[] starts, float[] lo, float[] step, byte[] data) {
    checkBits(bits);
    this.count = count;
    this.units = units;
    this.bits = bits;
    this.rowBytes = rowBytes(units, bits);
    this.starts = starts;
    this.lo = lo;
    this.step = step;
    this.data = data;
  }

  /** The block holding row {@code ord}. */
  private int block(int ord) {
    if (starts.length == 1) return 0;
    int i = Arrays.binarySearch(starts, ord);
    return i >= 0 ? i : -i - 2;
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
    if (!supported(bits)) throw new BadParameterException("bits", " per value must be 2, 4 or 8, got " + bits);
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
    Builder b = new Builder(n, units, bits, lo, hi);
    for (int i = 0; i < n; i++) b.add(values, i * units);
    return b.build();
  }

  /**
   * Quantises {@code n} rows one at a time, each column's range ({@code lo[j]..hi[j]}, over all
   * the rows) known beforehand: what {@link #quantise(float[], int, int, int)} does with the
   * values in one array, without the array (a value outside its column's range is stored as the
   * nearest end).
   */
  public static final class Builder {
    private final Magnitudes m;
    private final int levels, perByte;
    private int rows;

    public Builder(int n, int units, int bits, float[] lo, float[] hi) {
      if (!supported(bits)) throw new BadParameterException("bits", " per value must be 2, 4 or 8, got " + bits);
      if (lo.length != units || hi.length != units) throw new IllegalArgumentException(lo.length + " and " + hi.length + " bounds for " + units + " units");
      levels = (1 << bits) - 1;
      perByte = 8 / bits;
      float[] step = new float[units];
      float[] offset = new float[units];
      for (int j = 0; j < units; j++) {
        if (n == 0) continue;
        offset[j] = lo[j];
        step[j] = (float) (((double) hi[j] - lo[j]) / levels);
      }
      m = new Magnitudes(n, units, bits, new int[] {0}, offset, step, new byte[Math.multiplyExact(n, rowBytes(units, bits))]);
    }

    /** Quantises the next row, {@code units} values at {@code values[from ..]}. */
    public void add(float[] values, int from) {
      if (rows == m.count) throw new IllegalStateException("more than " + m.count + " rows");
      int rb = m.rowBytes, units = m.units;
      float[] offset = m.lo, step = m.step;
      byte[] data = m.data;
      int i = rows++;
      for (int j = 0; j < units; j++) {
        float v = values[from + j];
        if (!Float.isFinite(v)) throw new IllegalArgumentException("value " + v + " at row " + i + ", unit " + j);
        int q = 0;
        if (step[j] > 0) {
          long r = Math.round(((double) v - offset[j]) / step[j]);
          q = (int) Math.max(0, Math.min(levels, r));
        }
        data[i * rb + j / perByte] |= (byte) (q << ((j % perByte) * m.bits));
      }
    }

    /** Writes the dequantised row {@code ord} (one already added) to {@code out[off .. off+units)}. */
    public void dequantise(int ord, float[] out, int off) {
      if (ord >= rows) throw new IllegalArgumentException("row " + ord + " not added yet (" + rows + " rows)");
      m.dequantise(ord, out, off);
    }

    /** The rows quantised; every one of the {@code n} rows must have been added. */
    public Magnitudes build() {
      if (rows != m.count) throw new IllegalStateException(rows + " rows added of " + m.count);
      return m;
    }
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

  /** The largest error of one dequantised value of unit {@code j}: half its largest step. */
  public float maxError(int j) {
    float s = 0;
    for (int b = 0; b < starts.length; b++) s = Math.max(s, step[b * units + j]);
    return s / 2;
  }

  /** Writes the dequantised row {@code ord} to {@code out[off .. off+units)}. */
  public void dequantise(int ord, float[] out, int off) {
    int base = ord * rowBytes, p = block(ord) * units;
    if (bits == 8) {
      for (int j = 0; j < units; j++) out[off + j] = lo[p + j] + (data[base + j] & 0xff) * step[p + j];
      return;
    }
    // 2 or 4 bits: unit j in byte j >>> perByteShift at bit (j & (perByte-1)) * bits; shifts, no division
    int perByteShift = bits == 4 ? 1 : 2, slotMask = (1 << perByteShift) - 1, bitShift = bits == 4 ? 2 : 1, mask = (1 << bits) - 1;
    for (int j = 0; j < units; j++) {
      int q = (data[base + (j >>> perByteShift)] >>> ((j & slotMask) << bitShift)) & mask;
      out[off + j] = lo[p + j] + q * step[p + j];
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
   * of the same bits are copied byte for byte, each row keeping its offsets and steps (one block
   * per run of rows with the same ones), so every row reads back exactly as before; parts of
   * different bits are dequantised and quantised again, with the largest bits of the parts, over
   * the union of the parts' ranges (error at most half the old step plus half the new one).
   */
  public static Magnitudes merge(List<Magnitudes> parts, List<int[]> ords) {
    if (parts.isEmpty()) throw new IllegalArgumentException("nothing to merge");
    Magnitudes first = parts.getFirst();
    int units = first.units, bits = first.bits, n = 0;
    boolean same = true;
    for (Magnitudes m : parts) {
      if (m.units != units) throw new IllegalArgumentException("cannot merge magnitudes of " + m.units + " and " + units + " units");
      same &= m.bits == first.bits;
      bits = Math.max(bits, m.bits);
    }
    for (int[] o : ords) n = Math.addExact(n, o.length);
    int rb = first.rowBytes;
    if (same) {
      byte[] data = new byte[Math.multiplyExact(n, rb)];
      List<Integer> starts = new java.util.ArrayList<>();
      List<Magnitudes> owners = new java.util.ArrayList<>(); // block k's offsets and steps: owners[k]'s block at[k]
      List<Integer> at = new java.util.ArrayList<>();
      int row = 0;
      for (int p = 0; p < parts.size(); p++) {
        Magnitudes m = parts.get(p);
        for (int o : ords.get(p)) {
          int q = m.block(o) * units;
          if (starts.isEmpty() || !m.sameBlock(q, owners.getLast(), at.getLast())) {
            starts.add(row);
            owners.add(m);
            at.add(q);
          }
          System.arraycopy(m.data, o * rb, data, (row++) * rb, rb);
        }
      }
      if (starts.isEmpty()) return new Magnitudes(0, units, bits, new int[] {0}, new float[units], new float[units], data);
      float[] lo = new float[starts.size() * units], step = new float[lo.length];
      for (int k = 0; k < starts.size(); k++) {
        System.arraycopy(owners.get(k).lo, at.get(k), lo, k * units, units);
        System.arraycopy(owners.get(k).step, at.get(k), step, k * units, units);
      }
      return new Magnitudes(n, units, bits, starts.stream().mapToInt(Integer::intValue).toArray(), lo, step, data);
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
      for (int q = 0; q < m.lo.length; q += units)
        for (int j = 0; j < units; j++) {
          lo[j] = Math.min(lo[j], m.lo[q + j]);
          hi[j] = Math.max(hi[j], m.lo[q + j] + ((1 << m.bits) - 1) * m.step[q + j]);
        }
    }
    return quantise(values, n, units, bits, lo, hi);
  }

  /** True when this one's block at {@code q} has the offsets and steps of {@code o}'s block at {@code r}. */
  private boolean sameBlock(int q, Magnitudes o, int r) {
    return Arrays.equals(lo, q, q + units, o.lo, r, r + units) && Arrays.equals(step, q, q + units, o.step, r, r + units);
  }

  /** Writes {@code m} as the magnitudes file of segment {@code segmentId}. */
  static FileRef write(StoreIo io, Path dir, UUID uuid, int layoutHash, int segmentId, Magnitudes m) throws IOException {
    int blocks = m.starts.length;
    try (ChecksummedFile.Out out = ChecksummedFile.create(io, dir.resolve(fileName(segmentId)), CODEC,
        blocks == 1 ? VERSION_START : VERSION_CURRENT, layoutHash, uuid)) {
      out.writeInt(segmentId);
      out.writeInt(m.count);
      out.writeInt(m.units);
      out.writeByte(m.bits);
      if (blocks > 1) {
        out.writeInt(blocks);
        for (int s : m.starts) out.writeInt(s);
      }
      for (int q = 0; q < m.lo.length; q += m.units) {
        for (int j = 0; j < m.units; j++) out.writeFloat(m.lo[q + j]);
        for (int j = 0; j < m.units; j++) out.writeFloat(m.step[q + j]);
      }
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
    int[] starts = {0};
    if (in.header().version() >= 2) {
      int blocks = in.getCount("blocks", Math.max(2, n));
      if (blocks < 2) throw in.error("has " + blocks + " blocks (at least 2 expected in version 2)");
      starts = in.ints("block starts", blocks);
      for (int b = 0; b < blocks; b++)
        if (b == 0 ? starts[0] != 0 : starts[b] <= starts[b - 1] || starts[b] >= n)
          throw in.error("block " + b + " starts at row " + starts[b] + " (0, then ascending below " + n + ")");
    }
    float[] lo = new float[starts.length * units], step = new float[lo.length];
    for (int b = 0; b < starts.length; b++) {
      System.arraycopy(floats(in, "offsets", units), 0, lo, b * units, units);
      System.arraycopy(floats(in, "steps", units), 0, step, b * units, units);
      for (int j = b * units; j < (b + 1) * units; j++)
        if (!Float.isFinite(lo[j]) || !Float.isFinite(step[j]) || step[j] < 0)
          throw in.error((b > 0 ? "block " + b + ", " : "") + "unit " + (j - b * units) + " has offset " + lo[j] + " and step " + step[j]);
    }
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
    return new Magnitudes(n, units, bits, starts, lo, step, data);
  }

  private static float[] floats(ChecksummedFile.In in, String field, int count) {
    int[] raw = in.ints(field, count);
    float[] out = new float[count];
    for (int i = 0; i < count; i++) out[i] = Float.intBitsToFloat(raw[i]);
    return out;
  }
}
