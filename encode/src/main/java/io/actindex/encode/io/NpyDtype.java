package io.actindex.encode.io;

import java.nio.ByteBuffer;
import java.nio.ByteOrder;

/** The NumPy element types actindex reads and writes, with their {@code descr} type code. */
public enum NpyDtype {
  BOOL("b1", 1, true),
  INT8("i1", 1, true),
  UINT8("u1", 1, true),
  INT16("i2", 2, true),
  UINT16("u2", 2, true),
  INT32("i4", 4, false),
  UINT32("u4", 4, false),
  INT64("i8", 8, false),
  UINT64("u8", 8, false),
  FLOAT16("f2", 2, true),
  FLOAT32("f4", 4, true),
  FLOAT64("f8", 8, false);

  /** The type code after the byte-order character in a NumPy {@code descr}, e.g. {@code "f4"}. */
  public final String code;
  /** Bytes per element. */
  public final int size;
  /** Every value of this type is exactly a float. */
  public final boolean exactInFloat;

  NpyDtype(String code, int size, boolean exactInFloat) {
    this.code = code;
    this.size = size;
    this.exactInFloat = exactInFloat;
  }

  /** The type for a type code such as {@code "f4"}, or null. */
  public static NpyDtype ofCode(String code) {
    for (NpyDtype t : values()) if (t.code.equals(code)) return t;
    return null;
  }

  public boolean isFloat() {
    return this == FLOAT16 || this == FLOAT32 || this == FLOAT64;
  }

  /**
   * Decodes {@code count} elements from {@code bb} (from index 0, its order set) into {@code
   * out[off + k * stride]}.
   */
  void decode(ByteBuffer bb, int count, float[] out, int off, int stride) {
    if (this == FLOAT32 && stride == 1) {
      bb.asFloatBuffer().get(0, out, off, count);
      return;
    }
    for (int k = 0, o = off; k < count; k++, o += stride) out[o] = (float) get(bb, k);
  }

  /** As {@link #decode(ByteBuffer, int, float[], int, int)}, into doubles. */
  void decode(ByteBuffer bb, int count, double[] out, int off, int stride) {
    if (this == FLOAT64 && stride == 1) {
      bb.asDoubleBuffer().get(0, out, off, count);
      return;
    }
    if (this == FLOAT32) {
      for (int k = 0, o = off; k < count; k++, o += stride) out[o] = bb.getFloat(k << 2);
      return;
    }
    for (int k = 0, o = off; k < count; k++, o += stride) out[o] = get(bb, k);
  }

  /**
   * Element {@code k} as a double (uint64 above 2^63 is converted as unsigned, rounded to nearest
   * as NumPy's astype(float64) does: the bit halving drops stays as a sticky bit, so it can never
   * make a tie; common practice).
   */
  double get(ByteBuffer bb, int k) {
    return switch (this) {
      case BOOL -> bb.get(k) != 0 ? 1 : 0;
      case UINT8 -> bb.get(k) & 0xff;
      case INT8 -> bb.get(k);
      case INT16 -> bb.getShort(k << 1);
      case UINT16 -> bb.getShort(k << 1) & 0xffff;
      case INT32 -> bb.getInt(k << 2);
      case UINT32 -> bb.getInt(k << 2) & 0xffffffffL;
      case INT64 -> bb.getLong(k << 3);
      case UINT64 -> {
        long v = bb.getLong(k << 3);
        yield v >= 0 ? v : (double) (v >>> 1 | (v & 1)) * 2.0;
      }
      case FLOAT16 -> Float.float16ToFloat(bb.getShort(k << 1));
      case FLOAT32 -> bb.getFloat(k << 2);
      case FLOAT64 -> bb.getDouble(k << 3);
    };
  }

  /** The NumPy {@code descr} string for this type in byte order {@code order}. */
  public String descr(ByteOrder order) {
    if (size == 1) return "|" + code;
    return (order == ByteOrder.LITTLE_ENDIAN ? "<" : ">") + code;
  }
}
