package io.actindex.encode.io;

import io.actindex.core.BadInputException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;

/**
 * The header of a NumPy {@code .npy} file, as the NumPy format specification
 * ({@code numpy.lib.format}) defines it: the magic {@code \x93NUMPY}, a major and minor version
 * byte, the header length (2 bytes little-endian in version 1.0, 4 bytes in 2.0 and 3.0), then a
 * Python dict literal with {@code descr}, {@code fortran_order} and {@code shape}, padded with
 * spaces and ending in a newline. Version 3.0 only changes the header text encoding to UTF-8.
 *
 * @param dataOffset byte offset of the first element
 */
public record NpyHeader(int major, int minor, NpyDtype dtype, ByteOrder order, boolean fortranOrder, long[] shape, long dataOffset) {

  static final byte[] MAGIC = {(byte) 0x93, 'N', 'U', 'M', 'P', 'Y'};

  /** The header dict's keys: exactly these, as NumPy's {@code read_array_header} requires. */
  private static final Set<String> KEYS = Set.of("descr", "fortran_order", "shape");

  /** Rows: the first dimension. */
  public long rows() {
    return shape[0];
  }

  /** Values per row: the product of the other dimensions (1 for a 1-D array). */
  public long cols() {
    long c = 1;
    for (int i = 1; i < shape.length; i++) c = Math.multiplyExact(c, shape[i]);
    return c;
  }

  /** Bytes of element data the shape needs. */
  public long dataBytes() {
    return Math.multiplyExact(Math.multiplyExact(rows(), cols()), dtype.size);
  }

  public String shapeString() {
    StringBuilder sb = new StringBuilder("(");
    for (int i = 0; i < shape.length; i++) sb.append(i == 0 ? "" : ", ").append(shape[i]);
    return sb.append(shape.length == 1 ? ",)" : ")").toString();
  }

  /**
   * Checks magic and version in the first {@code len} bytes and returns the offset of the first
   * data byte (the end of the header).
   */
  static long headerEnd(byte[] head, int len, String file) {
    if (len < 10) throw new BadInputException(file + ": not a NumPy .npy file (only " + len + " bytes)");
    for (int i = 0; i < MAGIC.length; i++)
      if (head[i] != MAGIC[i]) throw new BadInputException(file + ": not a NumPy .npy file (wrong magic bytes at the start)");
    int major = head[6] & 0xff, minor = head[7] & 0xff;
    if (major < 1 || major > 3 || minor != 0)
      throw new BadInputException(file + ": unsupported .npy format version " + major + "." + minor + " (supported: 1.0, 2.0, 3.0)");
    ByteBuffer bb = ByteBuffer.wrap(head, 0, len).order(ByteOrder.LITTLE_ENDIAN);
    long hlen;
    if (major == 1) hlen = bb.getShort(8) & 0xffff;
    else if (len < 12) throw new BadInputException(file + ": truncated .npy header");
    else hlen = bb.getInt(8) & 0xffffffffL;
    if (hlen == 0) throw new BadInputException(file + ": .npy header length is 0 (the header must hold the dict of descr, fortran_order and shape)");
    if (major == 1) return 10 + hlen;
    if (hlen > 1 << 20) throw new BadInputException(file + ": .npy header length " + hlen + " is implausible (over 1 MiB)");
    return 12 + hlen;
  }

  /** How many bytes {@link #parse} needs first to learn the full header length. */
  static final int PREAMBLE = 12;

  /**
   * Parses a header. {@code head} holds the file's first bytes (at least the whole header if
   * available); {@code file} names the file in error messages.
   */
  static NpyHeader parse(byte[] head, int len, String file) {
    long end = headerEnd(head, len, file);
    if (end > len) throw new BadInputException(file + ": truncated .npy header (needs " + end + " bytes, the file has " + len + ")");
    int major = head[6] & 0xff, minor = head[7] & 0xff;
    int start = major == 1 ? 10 : 12;
    int hlen = (int) (end - start);
    String text = new String(head, start, hlen, major == 3 ? StandardCharsets.UTF_8 : StandardCharsets.ISO_8859_1);
    Map<String, Object> dict;
    try {
      Object v = new Literal(text).parseTop();
      if (!(v instanceof Map<?, ?> m)) throw new IllegalArgumentException("not a dict");
      @SuppressWarnings("unchecked")
      Map<String, Object> cast = (Map<String, Object>) m;
      dict = cast;
    } catch (IllegalArgumentException e) {
      throw new BadInputException(file + ": malformed .npy header: " + e.getMessage());
    }
    if (!dict.keySet().equals(KEYS))
      throw new BadInputException(file + ": .npy header keys are " + describe(dict.keySet().stream().sorted().toList())
          + "; NumPy's format requires exactly 'descr', 'fortran_order' and 'shape'");
    Object descr = dict.get("descr");
    if (!(descr instanceof String d))
      throw new BadInputException(file + ": field 'descr': unsupported dtype " + describe(descr) + " (structured arrays are not supported)");
    // The byte-order character is optional in a descr: NumPy's dtype('f4') is native order.
    // Common practice: a missing byte order is read as little-endian, the native order of every
    // machine actindex targets ('=' is read the same way); single-byte types ignore it.
    char bo = d.isEmpty() ? '\0' : d.charAt(0);
    boolean hasOrder = "<>|=".indexOf(bo) >= 0;
    NpyDtype dtype = NpyDtype.ofCode(hasOrder ? d.substring(1) : d);
    if (dtype == null)
      throw new BadInputException(file + ": field 'descr': unsupported dtype " + BadInputException.quote(d)
          + " (supported: float16/32/64, int8/16/32/64, uint8/16/32/64, bool, as '<f4', '>f4', 'f4' or '|u1')");
    ByteOrder order = bo == '>' ? ByteOrder.BIG_ENDIAN : ByteOrder.LITTLE_ENDIAN;
    Object fo = dict.get("fortran_order");
    if (!(fo instanceof Boolean fortran)) throw new BadInputException(file + ": field 'fortran_order' must be True or False, not " + describe(fo));
    Object sh = dict.get("shape");
    if (!(sh instanceof Tuple(List<Object> dims)))
      throw new BadInputException(file + ": field 'shape' must be a tuple of integers such as (3, 4) or (3,), not "
          + (sh instanceof List<?> ? "a list " : "") + describe(sh));
    if (dims.isEmpty()) throw new BadInputException(file + ": field 'shape': a 0-dimensional array has no rows");
    long[] shape = new long[dims.size()];
    for (int i = 0; i < shape.length; i++) {
      if (!(dims.get(i) instanceof Long l) || l < 0)
        throw new BadInputException(file + ": field 'shape': dimension " + i + " is not a non-negative integer");
      shape[i] = l;
    }
    NpyHeader h = new NpyHeader(major, minor, dtype, order, fortran, shape, start + hlen);
    try {
      h.dataBytes();
    } catch (ArithmeticException e) {
      throw new BadInputException(file + ": field 'shape' " + h.shapeString() + " overflows");
    }
    return h;
  }

  private static String describe(Object o) {
    return BadInputException.snippet(Literal.repr(o), 80);
  }

  /**
   * Builds a version 1.0 header (2.0 when longer than 65535 bytes), padded with spaces to a
   * multiple of 64 bytes, or to exactly {@code total} bytes when {@code total > 0}.
   */
  static byte[] write(NpyDtype dtype, ByteOrder order, boolean fortran, long[] shape, int total) {
    StringBuilder sb = new StringBuilder("{'descr': '").append(dtype.descr(order)).append("', 'fortran_order': ")
        .append(fortran ? "True" : "False").append(", 'shape': (");
    for (int i = 0; i < shape.length; i++) sb.append(i == 0 ? "" : ", ").append(shape[i]);
    sb.append(shape.length == 1 ? ",), }" : "), }");
    boolean v2 = sb.length() + 11 > 65535;
    int pre = v2 ? 12 : 10;
    if (total <= 0) total = (pre + sb.length() + 1 + 63) / 64 * 64;
    if (pre + sb.length() + 1 > total) throw new IllegalStateException("npy header does not fit in " + total + " bytes");
    while (sb.length() < total - pre - 1) sb.append(' ');
    sb.append('\n');
    ByteBuffer bb = ByteBuffer.allocate(total).order(ByteOrder.LITTLE_ENDIAN);
    bb.put(MAGIC).put((byte) (v2 ? 2 : 1)).put((byte) 0);
    if (v2) bb.putInt(total - pre);
    else bb.putShort((short) (total - pre));
    bb.put(sb.toString().getBytes(StandardCharsets.ISO_8859_1));
    return bb.array();
  }

  /** A Python tuple; a Python list is a plain {@link List}. */
  private record Tuple(List<Object> items) {}

  /**
   * A parser for the Python literal subset NumPy writes: dicts ({@link Map}), tuples ({@link
   * Tuple}), lists ({@link List}), strings, ints (with Python 2's {@code L} suffix), True/False/None.
   */
  private static final class Literal {
    private final String s;
    private int pos;

    Literal(String s) {
      this.s = s;
    }

    /** Deepest nesting of dicts, tuples and lists accepted (NumPy writes 2 levels). */
    static final int MAX_DEPTH = 32;
    private int depth;

    Object parseTop() {
      Object v = value();
      ws();
      if (pos < s.length()) throw new IllegalArgumentException("unexpected text at character " + pos);
      return v;
    }

    private Object value() {
      ws();
      if (pos >= s.length()) throw new IllegalArgumentException("unexpected end");
      char c = s.charAt(pos);
      if ((c == '{' || c == '(' || c == '[') && ++depth > MAX_DEPTH)
        throw new IllegalArgumentException("nesting deeper than " + MAX_DEPTH + " levels at character " + pos);
      if (c == '{') {
        pos++;
        Map<String, Object> m = new LinkedHashMap<>();
        while (true) {
          ws();
          if (peek() == '}') {
            pos++;
            depth--;
            return m;
          }
          Object k = value();
          if (!(k instanceof String key)) throw new IllegalArgumentException("dict key is not a string at character " + pos);
          ws();
          if (peek() != ':') throw new IllegalArgumentException("expected ':' at character " + pos);
          pos++;
          m.put(key, value());
          ws();
          if (peek() == ',') pos++;
          else if (peek() != '}') throw new IllegalArgumentException("expected ',' or '}' at character " + pos);
        }
      }
      if (c == '(' || c == '[') {
        char close = c == '(' ? ')' : ']';
        pos++;
        List<Object> l = new ArrayList<>();
        boolean comma = false;
        while (true) {
          ws();
          if (peek() == close) {
            pos++;
            depth--;
            if (c == '[') return l;
            // as in Python: (3) is the integer 3, (3,) and () are tuples
            return l.size() == 1 && !comma ? l.getFirst() : new Tuple(l);
          }
          l.add(value());
          ws();
          if (peek() == ',') {
            pos++;
            comma = true;
          } else if (peek() != close) throw new IllegalArgumentException("expected ',' or '" + close + "' at character " + pos);
        }
      }
      if (c == '\'' || c == '"') {
        int end = s.indexOf(c, pos + 1);
        if (end < 0) throw new IllegalArgumentException("unterminated string at character " + pos);
        String v = s.substring(pos + 1, end);
        pos = end + 1;
        return v;
      }
      int start = pos;
      while (pos < s.length() && (Character.isLetterOrDigit(s.charAt(pos)) || s.charAt(pos) == '-' || s.charAt(pos) == '_')) pos++;
      String tok = s.substring(start, pos);
      switch (tok) {
        case "True": return Boolean.TRUE;
        case "False": return Boolean.FALSE;
        case "None": return null;
        default:
          String digits = tok.endsWith("L") ? tok.substring(0, tok.length() - 1) : tok;
          try {
            return Long.parseLong(digits);
          } catch (NumberFormatException e) {
            throw new IllegalArgumentException("unexpected token " + BadInputException.quote(tok) + " at character " + start);
          }
      }
    }

    /** A value written back as Python would print it, for messages. */
    static String repr(Object o) {
      return switch (o) {
        case null -> "None";
        case Boolean b -> b ? "True" : "False";
        case String str -> "'" + str + "'";
        case Tuple(List<Object> items) -> items.size() == 1 ? "(" + repr(items.getFirst()) + ",)" : join(items, "(", ")");
        case List<?> l -> join(l, "[", "]");
        case Map<?, ?> m -> "{...}";
        default -> o.toString();
      };
    }

    private static String join(java.util.Collection<?> items, String open, String close) {
      StringBuilder sb = new StringBuilder(open);
      for (Object item : items) sb.append(sb.length() == open.length() ? "" : ", ").append(repr(item));
      return sb.append(close).toString();
    }

    private void ws() {
      while (pos < s.length() && Character.isWhitespace(s.charAt(pos))) pos++;
    }

    private char peek() {
      return pos < s.length() ? s.charAt(pos) : '\0';
    }
  }
}
