package io.actindex.encode.io;

import io.actindex.core.BadInputException;
import io.actindex.core.Names;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.channels.FileChannel;
import java.nio.charset.CharacterCodingException;
import java.nio.charset.CodingErrorAction;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.util.Arrays;
import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * Reads a safetensors file, following the published format: an unsigned 64-bit little-endian
 * header length {@code N}, {@code N} bytes of UTF-8 JSON mapping each tensor name to {@code
 * dtype}, {@code shape} and {@code data_offsets [begin, end)} (relative to the byte after the
 * header), an optional {@code __metadata__} string map, then the raw little-endian data.
 *
 * <p>Every entry is checked on open: known dtype, non-negative shape, offsets inside the data
 * region and a byte length equal to the shape's. Tensors of F32, F16, BF16 and F64 can be read as
 * doubles; other dtypes are listed but refused on read. Tensor names are in Unicode NFC ({@link
 * Names}; two that differ only in their Unicode form are refused). Not thread-safe.
 */
public final class SafetensorsReader implements AutoCloseable {
  /** One tensor's header entry. {@code begin} is the absolute file offset of its data. */
  public record Entry(String name, String dtype, long[] shape, long begin, long bytes) {
    /** Number of elements. */
    public long count() {
      long c = 1;
      for (long s : shape) c *= s;
      return c;
    }

    public String shapeString() {
      return Arrays.toString(shape);
    }
  }

  static final long MAX_HEADER = 100L << 20;
  private static final Map<String, Integer> SIZES = Map.ofEntries(
      Map.entry("BOOL", 1), Map.entry("U8", 1), Map.entry("I8", 1), Map.entry("F8_E5M2", 1), Map.entry("F8_E4M3", 1),
      Map.entry("I16", 2), Map.entry("U16", 2), Map.entry("F16", 2), Map.entry("BF16", 2),
      Map.entry("I32", 4), Map.entry("U32", 4), Map.entry("F32", 4),
      Map.entry("I64", 8), Map.entry("U64", 8), Map.entry("F64", 8));

  /** Where the bytes come from: a file, or bytes in memory (a model stored in an index). */
  private interface Bytes extends AutoCloseable {
    long size() throws IOException;

    /** Fills {@code dst} from byte {@code pos}; -1 at the end. */
    int read(ByteBuffer dst, long pos) throws IOException;

    @Override
    void close() throws IOException;
  }

  private final String file;
  private final Bytes ch;
  private final Map<String, Entry> entries;
  private final Map<String, String> metadata;

  private SafetensorsReader(String file, Bytes ch, Map<String, Entry> entries, Map<String, String> metadata) {
    this.file = file;
    this.ch = ch;
    this.entries = entries;
    this.metadata = metadata;
  }

  public static SafetensorsReader open(Path file) throws IOException {
    FileChannel fc = FileChannel.open(file, StandardOpenOption.READ);
    return open(file.toString(), new Bytes() {
      public long size() throws IOException {
        return fc.size();
      }

      public int read(ByteBuffer dst, long pos) throws IOException {
        return fc.read(dst, pos);
      }

      public void close() throws IOException {
        fc.close();
      }
    });
  }

  /** Reads safetensors bytes held in memory; {@code name} names them in messages. */
  public static SafetensorsReader open(String name, byte[] bytes) throws IOException {
    return open(name, new Bytes() {
      public long size() {
        return bytes.length;
      }

      public int read(ByteBuffer dst, long pos) {
        if (pos >= bytes.length) return -1;
        int n = (int) Math.min(dst.remaining(), bytes.length - pos);
        dst.put(bytes, (int) pos, n);
        return n;
      }

      public void close() {}
    });
  }

  private static SafetensorsReader open(String file, Bytes ch) throws IOException {
    try {
      long size = ch.size();
      if (size < 8) throw new BadInputException(file + ": not a safetensors file (" + size + " bytes, the header length alone needs 8)");
      ByteBuffer lb = ByteBuffer.allocate(8).order(ByteOrder.LITTLE_ENDIAN);
      readFully(ch, lb, 0, file);
      long n = lb.getLong(0);
      if (n < 0 || n > size - 8) {
        // torch.save writes a zip archive (since PyTorch 1.6) or, older, a pickle (protocol 2+ starts with 0x80)
        boolean zip = lb.get(0) == 'P' && lb.get(1) == 'K' && lb.get(2) == 3 && lb.get(3) == 4, pickle = (lb.get(0) & 0xff) == 0x80;
        if (zip && firstZipEntry(ch).endsWith(".npy")) // np.savez: e.g. the arrays of scikit-learn's coefs_ and intercepts_
          throw new BadInputException(file + ": a NumPy .npz archive, not safetensors; save the layers with safetensors.numpy.save_file,"
              + " named NAME.weight [out, in] and NAME.bias (scikit-learn's coefs_[i] is [in, out]: save np.ascontiguousarray(coefs_[i].T))");
        if (zip || pickle)
          throw new BadInputException(file + ": a PyTorch checkpoint (torch.save, " + (zip ? "zip" : "pickle") + "), not safetensors; save the"
              + " weights with safetensors.torch.save_file(model.state_dict(), 'model.safetensors')");
        throw new BadInputException(file + ": field header length: " + Long.toUnsignedString(n) + " bytes points outside the file (" + size + " bytes)");
      }
      if (n > MAX_HEADER) throw new BadInputException(file + ": field header length: " + n + " bytes is implausible (over 100 MiB)");
      ByteBuffer hb = ByteBuffer.allocate((int) n);
      readFully(ch, hb, 8, file);
      String text;
      try {
        text = StandardCharsets.UTF_8.newDecoder().onMalformedInput(CodingErrorAction.REPORT)
            .onUnmappableCharacter(CodingErrorAction.REPORT).decode(hb.flip()).toString();
      } catch (CharacterCodingException e) {
        throw new BadInputException(file + ": the safetensors JSON header is not valid UTF-8 (at header byte " + badUtf8(hb.array()) + ")");
      }
      Object json;
      try {
        json = Json.parse(text);
      } catch (IllegalArgumentException e) {
        throw new BadInputException(file + ": malformed safetensors JSON header: " + e.getMessage());
      }
      if (!(json instanceof Map<?, ?> top)) throw new BadInputException(file + ": safetensors header is not a JSON object");
      long dataStart = 8 + n, dataSize = size - dataStart;
      Map<String, Entry> entries = new LinkedHashMap<>();
      Map<String, String> meta = new LinkedHashMap<>();
      for (var e : top.entrySet()) {
        String name = Names.nfc((String) e.getKey());
        String q = BadInputException.quote(name);
        if (name.equals("__metadata__")) {
          if (!(e.getValue() instanceof Map<?, ?> m)) throw new BadInputException(file + ": field __metadata__ is not an object");
          for (var me : m.entrySet()) {
            if (!(me.getValue() instanceof String v))
              throw new BadInputException(file + ": field __metadata__." + BadInputException.quote((String) me.getKey()) + " is not a string");
            meta.put((String) me.getKey(), v);
          }
          continue;
        }
        if (entries.put(name, entry(file, name, e.getValue(), dataStart, dataSize)) != null)
          throw new BadInputException(file + ": two tensors named " + q + " (written in two Unicode forms, one with a combining accent)");
      }
      checkCoverage(file, entries.values(), dataStart, dataSize);
      return new SafetensorsReader(file, ch, Collections.unmodifiableMap(entries), Collections.unmodifiableMap(meta));
    } catch (RuntimeException | IOException e) {
      ch.close();
      throw e;
    }
  }

  /** Offset of the first byte where strict UTF-8 decoding fails. */
  static int badUtf8(byte[] b) {
    var d = StandardCharsets.UTF_8.newDecoder().onMalformedInput(CodingErrorAction.REPORT).onUnmappableCharacter(CodingErrorAction.REPORT);
    ByteBuffer in = ByteBuffer.wrap(b);
    java.nio.CharBuffer out = java.nio.CharBuffer.allocate(b.length + 1);
    var r = d.decode(in, out, true);
    return r.isError() ? in.position() : b.length;
  }

  private static Entry entry(String file, String name, Object v, long dataStart, long dataSize) {
    String at = file + ": tensor " + BadInputException.quote(name);
    if (!(v instanceof Map<?, ?> m)) throw new BadInputException(at + " is not a JSON object");
    if (!(m.get("dtype") instanceof String dtype)) throw new BadInputException(at + ": field dtype is missing");
    Integer size = SIZES.get(dtype);
    if (size == null) throw new BadInputException(at + ": field dtype: unsupported dtype " + BadInputException.quote(dtype));
    if (!(m.get("shape") instanceof List<?> sh)) throw new BadInputException(at + ": field shape is missing");
    if (sh.size() > 32) throw new BadInputException(at + ": field shape has " + sh.size() + " dimensions (at most 32)");
    long[] shape = new long[sh.size()];
    long count = 1;
    for (int i = 0; i < shape.length; i++) {
      if (!(sh.get(i) instanceof Long l) || l < 0) throw new BadInputException(at + ": field shape: dimension " + i + " is not a non-negative integer");
      shape[i] = l;
      try {
        count = Math.multiplyExact(count, l);
      } catch (ArithmeticException ex) {
        throw new BadInputException(at + ": field shape " + sh + " overflows");
      }
    }
    if (!(m.get("data_offsets") instanceof List<?> off) || off.size() != 2
        || !(off.get(0) instanceof Long b) || !(off.get(1) instanceof Long e))
      throw new BadInputException(at + ": field data_offsets is not [begin, end]");
    if (b < 0 || e < b || e > dataSize)
      throw new BadInputException(at + ": field data_offsets [" + b + ", " + e + "] points outside the file (the data region holds " + dataSize + " bytes)");
    long need;
    try {
      need = Math.multiplyExact(count, (long) size);
    } catch (ArithmeticException ex) {
      throw new BadInputException(at + ": field shape " + sh + " overflows");
    }
    if (e - b != need)
      throw new BadInputException(at + ": field data_offsets [" + b + ", " + e + "] holds " + (e - b) + " bytes; shape " + sh + " of " + dtype + " needs " + need);
    return new Entry(name, dtype, shape, dataStart + b, e - b);
  }

  /** The format requires the tensors to cover the data region exactly: no holes, no overlaps. */
  private static void checkCoverage(String file, java.util.Collection<Entry> entries, long dataStart, long dataSize) {
    List<Entry> sorted = new java.util.ArrayList<>(entries);
    sorted.sort(java.util.Comparator.comparingLong(Entry::begin).thenComparingLong(Entry::bytes));
    long at = dataStart;
    for (Entry e : sorted) {
      if (e.begin() != at)
        throw new BadInputException(file + ": tensor " + BadInputException.quote(e.name()) + ": field data_offsets starts at " + (e.begin() - dataStart) + " but the previous tensor ends at "
            + (at - dataStart) + (e.begin() > at ? " (a hole in the data)" : " (tensors overlap)"));
      at += e.bytes();
    }
    if (at != dataStart + dataSize)
      throw new BadInputException(file + ": the tensors cover " + (at - dataStart) + " data bytes but the file holds " + dataSize);
  }

  /** The name of the first entry of a zip archive (its local file header at offset 0), or "" when it cannot be read. */
  private static String firstZipEntry(Bytes ch) throws IOException {
    ByteBuffer h = ByteBuffer.allocate(30 + 256).order(ByteOrder.LITTLE_ENDIAN);
    while (h.hasRemaining() && ch.read(h, h.position()) > 0) {}
    if (h.position() < 30) return "";
    int len = Math.min(h.getShort(26) & 0xffff, h.position() - 30);
    return new String(h.array(), 30, len, StandardCharsets.UTF_8);
  }

  private static void readFully(Bytes ch, ByteBuffer dst, long pos, String file) throws IOException {
    while (dst.hasRemaining()) {
      int n = ch.read(dst, pos);
      if (n < 0) throw new BadInputException(file + ": truncated at byte " + pos);
      pos += n;
    }
  }

  /** The name used in messages (the file, or the name given for bytes in memory). */
  public String file() {
    return file;
  }

  /** Tensor entries by name, in header order. */
  public Map<String, Entry> entries() {
    return entries;
  }

  /** The {@code __metadata__} map (empty if absent). */
  public Map<String, String> metadata() {
    return metadata;
  }

  /** The entry {@code name}; BadInputException naming the file if absent. */
  public Entry entry(String name) {
    Entry e = entries.get(Names.nfc(name));
    if (e == null) throw new BadInputException(file + ": no tensor named " + BadInputException.quote(name));
    return e;
  }

  /**
   * The values of tensor {@code name} (row-major) as doubles; F32, F16, BF16 and F64 only. A NaN
   * or infinite value is refused naming the tensor and the flat element index.
   */
  public double[] read(String name) throws IOException {
    Entry e = entry(name);
    if (e.count() > Integer.MAX_VALUE - 8) throw new BadInputException(file + ": tensor " + BadInputException.quote(name) + " is too large to load");
    ByteBuffer bb = ByteBuffer.allocate((int) e.bytes()).order(ByteOrder.LITTLE_ENDIAN);
    readFully(ch, bb, e.begin(), file);
    int n = (int) e.count();
    double[] out = new double[n];
    switch (e.dtype()) {
      case "F32" -> { for (int i = 0; i < n; i++) out[i] = bb.getFloat(i << 2); }
      case "F64" -> { for (int i = 0; i < n; i++) out[i] = bb.getDouble(i << 3); }
      case "F16" -> { for (int i = 0; i < n; i++) out[i] = Float.float16ToFloat(bb.getShort(i << 1)); }
      case "BF16" -> { for (int i = 0; i < n; i++) out[i] = Float.intBitsToFloat((bb.getShort(i << 1) & 0xffff) << 16); }
      default -> throw new BadInputException(file + ": tensor " + BadInputException.quote(name) + ": field dtype: " + e.dtype()
          + (e.dtype().startsWith("F8") ? " (8-bit floating point) is not read" : " is not a floating-point type")
          + " (supported: F32, F16, BF16, F64)");
    }
    for (int i = 0; i < n; i++)
      if (!Double.isFinite(out[i])) throw new BadInputException(file + ": tensor " + BadInputException.quote(name) + ", element " + i + ": value is not finite");
    return out;
  }

  @Override
  public void close() throws IOException {
    ch.close();
  }
}
