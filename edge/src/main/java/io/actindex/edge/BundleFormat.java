package io.actindex.edge;

import java.io.ByteArrayOutputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.BufferUnderflowException;
import java.nio.ByteBuffer;
import java.nio.charset.CharacterCodingException;
import java.nio.charset.CodingErrorAction;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.zip.CRC32;

/**
 * The edge bundle's bytes (one file, written by {@code actindex export-edge}). All numbers are
 * big-endian; {@code str} is a u16 byte length followed by that many bytes of UTF-8.
 *
 * <pre>
 * magic      8 bytes   0x89 'A' 'X' 'E' 'D' 'G' 0x0D 0x0A   (a text-mode transfer or a foreign file fails here)
 * version    u32       1
 * flags      u32       bit 0: calibration present; bit 1: model present; bit 2: range guard present
 *                      (only with bit 1); other bits 0
 * layers     u32       L &gt;= 1, then L x (str name, u32 bits &gt;= 1)           the code layout
 * unique     u32       n, the number of unique codes
 * examples   u64       training examples = the sum of the counts
 * codes      n x W x u64   W = ceil(bits / 64) words per code; bit i of a code is bit (i &amp; 63) of
 *                          word (i &gt;&gt;&gt; 6); bits past the layout's width are 0
 * counts     n x u32   examples sharing each code, each &gt;= 1, non-increasing (most shared first)
 * calibration (flag bit 0)
 *   k          u32     1 &lt;= k &lt;= examples
 *   statistic  u8      1 = distance to the k-th nearest, 2 = mean of the k nearest
 *   layers     u32 C, then C x str    layers the distance counts (C = 0: all)
 *   tpr        f64     target share of in-distribution inputs accepted, in (0, 1)
 *   threshold  f64     out when score &gt; threshold
 *   scores     u32 m &gt;= 1, then m x f64 ascending    calibration scores (for p-values)
 * model (flag bit 1)
 *   layers     u32 M &gt;= 2, then M x (str name, u32 out, u32 in, out*in x f32 weight row-major [out, in],
 *                                 out x f32 bias); ReLU after every layer but the last; the hidden
 *                                 layers named in the code layout give its bits, in layout order
 *   thresholds bits x f64   bit i is on when its neuron's activation (after ReLU) is &gt; thresholds[i]
 * range guard (flag bit 2)
 *   bounds     L x f64   per code layer, in layout order, finite and &gt;= 0: an upper bound of the
 *                        Euclidean norm of that layer's activations over the training examples
 * crc        u32       CRC32 (ISO-HDLC, java.util.zip.CRC32) of every byte before it
 * </pre>
 *
 * Bundles written before the range guard (flag bit 2 clear) read as they did; a reader from before
 * it refuses a bundle that has one (unknown flag bit). Nothing may follow the CRC. The reader checks the magic, the version (another version is told as
 * such when the CRC is right, as damage when it is not), the CRC, every count
 * against the bytes that remain, and every field's range, and throws {@link EdgeFormatException}
 * naming the file and field; it never scores from a damaged bundle.
 */
public final class BundleFormat {
  private BundleFormat() {}

  static final byte[] MAGIC = {(byte) 0x89, 'A', 'X', 'E', 'D', 'G', 0x0D, 0x0A};
  public static final int VERSION = 1;
  static final int FLAG_CALIBRATION = 1, FLAG_MODEL = 2, FLAG_RANGE = 4;

  /** The bundle's bytes. */
  public static byte[] toBytes(EdgeBundle b) {
    try {
      ByteArrayOutputStream bytes = new ByteArrayOutputStream();
      DataOutputStream out = new DataOutputStream(bytes);
      out.write(MAGIC);
      out.writeInt(VERSION);
      EdgeBundle.Calibration cal = b.calibration();
      EdgeBundle.Model model = b.model();
      out.writeInt((cal != null ? FLAG_CALIBRATION : 0) | (model != null ? FLAG_MODEL : 0) | (b.hasRangeGuard() ? FLAG_RANGE : 0));
      out.writeInt(b.layerNames().size());
      int[] bits = b.layerBits();
      for (int i = 0; i < bits.length; i++) {
        str(out, b.layerNames().get(i));
        out.writeInt(bits[i]);
      }
      out.writeInt(b.uniqueCodes());
      out.writeLong(b.examples());
      for (int i = 0; i < b.uniqueCodes(); i++) for (long w : b.code(i)) out.writeLong(w);
      for (int i = 0; i < b.uniqueCodes(); i++) out.writeInt(b.count(i));
      if (cal != null) {
        out.writeInt(cal.k());
        out.writeByte(cal.statistic().id);
        out.writeInt(cal.layers().size());
        for (String l : cal.layers()) str(out, l);
        out.writeDouble(cal.tpr());
        out.writeDouble(cal.threshold());
        double[] s = cal.scores();
        out.writeInt(s.length);
        for (double v : s) out.writeDouble(v);
      }
      if (model != null) {
        out.writeInt(model.layers().size());
        for (EdgeBundle.Layer l : model.layers()) {
          str(out, l.name());
          out.writeInt(l.out());
          out.writeInt(l.in());
          for (float v : l.weight()) out.writeFloat(v);
          for (float v : l.bias()) out.writeFloat(v);
        }
        for (double t : model.thresholds()) out.writeDouble(t);
        if (model.rangeBounds() != null) for (double v : model.rangeBounds()) out.writeDouble(v);
      }
      out.flush();
      CRC32 crc = new CRC32();
      crc.update(bytes.toByteArray());
      out.writeInt((int) crc.getValue());
      out.flush();
      return bytes.toByteArray();
    } catch (IOException e) {
      throw new UncheckedIOException(e); // a byte array does not fail
    }
  }

  /** Reads and checks a bundle file. */
  public static EdgeBundle read(Path file) throws IOException {
    return read(Files.readAllBytes(file), file.toString());
  }

  /** Reads and checks a bundle from its bytes; {@code source} names it in messages. */
  public static EdgeBundle read(byte[] bytes, String source) throws EdgeFormatException {
    if (bytes.length == 0) throw new EdgeFormatException(source + ": the file is empty (0 bytes), not a bundle");
    int head = Math.min(bytes.length, MAGIC.length);
    if (!Arrays.equals(bytes, 0, head, MAGIC, 0, head))
      throw new EdgeFormatException(source + ": not an actindex edge bundle (magic bytes differ)");
    if (bytes.length < MAGIC.length + 8) // magic, version and at least the CRC
      throw new EdgeFormatException(source + ": truncated: " + bytes.length + " bytes, the start of a bundle but too short to hold one");
    ByteBuffer in = ByteBuffer.wrap(bytes);
    in.position(MAGIC.length);
    int version = in.getInt();
    CRC32 crc = new CRC32();
    crc.update(bytes, 0, bytes.length - 4);
    int stored = ByteBuffer.wrap(bytes, bytes.length - 4, 4).getInt();
    // another version whose CRC is right is another version; with a wrong CRC it is damage (a flipped bit in the version, say)
    if (version != VERSION && stored == (int) crc.getValue())
      throw new EdgeFormatException(source + ": field version: bundle version " + version + ", this reader reads " + VERSION);
    if (stored != (int) crc.getValue())
      throw new EdgeFormatException(source + ": CRC32 mismatch (stored " + Integer.toHexString(stored) + ", computed "
          + Long.toHexString(crc.getValue()) + "): the bundle is damaged" + (version != VERSION ? " (its version field reads " + version
          + ", this reader reads " + VERSION + ")" : ""));
    ByteBuffer body = ByteBuffer.wrap(bytes, 0, bytes.length - 4);
    body.position(in.position());
    Reader r = new Reader(body, source);
    try {
      int flags = r.u32("flags");
      if ((flags & ~(FLAG_CALIBRATION | FLAG_MODEL | FLAG_RANGE)) != 0) throw r.error("flags", "unknown flag bits " + Integer.toHexString(flags));
      if ((flags & FLAG_RANGE) != 0 && (flags & FLAG_MODEL) == 0) throw r.error("flags", "a range guard without a model");
      int layerCount = r.count("layers", 6);
      if (layerCount < 1) throw r.error("layers", "no layer");
      List<String> names = new ArrayList<>();
      int[] bits = new int[layerCount];
      long total = 0;
      for (int i = 0; i < layerCount; i++) {
        names.add(r.str("layer name"));
        bits[i] = r.u32("layer bits");
        total += bits[i];
      }
      if (total > 1 << 24) throw r.error("layer bits", "code of " + total + " bits");
      int words = (int) ((total + 63) >>> 6);
      int n = r.count("unique", 8L * words + 4);
      long examples = r.body.getLong();
      long[] codes = new long[n * words];
      for (int i = 0; i < codes.length; i++) codes[i] = body.getLong();
      int[] counts = new int[n];
      long sum = 0;
      for (int i = 0; i < n; i++) sum += counts[i] = r.u32("count");
      if (sum != examples) throw r.error("examples", examples + " but the counts sum to " + sum);
      EdgeBundle.Calibration cal = null;
      if ((flags & FLAG_CALIBRATION) != 0) {
        int k = r.u32("calibration k");
        int stat = body.get() & 0xff;
        EdgeBundle.Statistic statistic;
        try {
          statistic = EdgeBundle.Statistic.ofId(stat);
        } catch (IllegalArgumentException e) {
          throw r.error("calibration statistic", "unknown id " + stat);
        }
        int c = r.count("calibration layers", 2);
        List<String> layers = new ArrayList<>();
        for (int i = 0; i < c; i++) layers.add(r.str("calibration layer"));
        double tpr = body.getDouble(), threshold = body.getDouble();
        int m = r.count("calibration scores", 8);
        double[] scores = new double[m];
        for (int i = 0; i < m; i++) scores[i] = body.getDouble();
        cal = r.build("calibration", () -> new EdgeBundle.Calibration(k, statistic, layers, tpr, threshold, scores));
      }
      EdgeBundle.Model model = null;
      if ((flags & FLAG_MODEL) != 0) {
        int mCount = r.count("model layers", 14);
        List<EdgeBundle.Layer> layers = new ArrayList<>();
        for (int l = 0; l < mCount; l++) {
          String name = r.str("model layer name");
          int out = r.u32("model layer out"), inW = r.u32("model layer in");
          long values = (long) out * inW + out;
          if (values * 4 > body.remaining()) throw r.error("model layer " + name, "shape [" + out + ", " + inW + "] needs more bytes than remain");
          float[] w = new float[out * inW], b = new float[out];
          for (int i = 0; i < w.length; i++) w[i] = body.getFloat();
          for (int i = 0; i < b.length; i++) b[i] = body.getFloat();
          layers.add(r.build("model layer " + name, () -> new EdgeBundle.Layer(name, out, inW, w, b)));
        }
        if ((long) total * 8 > body.remaining()) throw r.error("model thresholds", "truncated");
        double[] t = new double[(int) total];
        for (int i = 0; i < t.length; i++) t[i] = body.getDouble();
        double[] bounds = null;
        if ((flags & FLAG_RANGE) != 0) {
          if ((long) layerCount * 8 > body.remaining()) throw r.error("range guard", "truncated");
          bounds = new double[layerCount];
          for (int i = 0; i < layerCount; i++)
            if (!((bounds[i] = body.getDouble()) >= 0 && bounds[i] < Double.POSITIVE_INFINITY))
              throw r.error("range guard", "bound of layer " + names.get(i) + " is " + bounds[i] + " (finite and >= 0 expected)");
        }
        double[] fb = bounds;
        model = r.build("model", () -> new EdgeBundle.Model(layers, t, fb));
      }
      if (body.hasRemaining()) throw r.error("end", body.remaining() + " unexpected bytes before the CRC");
      EdgeBundle.Calibration fc = cal;
      EdgeBundle.Model fm = model;
      return r.build("bundle", () -> new EdgeBundle(names, bits, codes, counts, fc, fm));
    } catch (BufferUnderflowException e) {
      throw new EdgeFormatException(source + ": truncated bundle");
    }
  }

  private static void str(DataOutputStream out, String s) throws IOException {
    byte[] b = s.getBytes(StandardCharsets.UTF_8);
    if (b.length > 0xffff) throw new IllegalArgumentException("name longer than 65535 bytes");
    out.writeShort(b.length);
    out.write(b);
  }

  /** Field readers that name the field and the file in every error. */
  private static final class Reader {
    final ByteBuffer body;
    final String source;

    Reader(ByteBuffer body, String source) {
      this.body = body;
      this.source = source;
    }

    EdgeFormatException error(String field, String what) {
      return new EdgeFormatException(source + ": field " + field + ": " + what);
    }

    int u32(String field) throws EdgeFormatException {
      int v = body.getInt();
      if (v < 0) throw error(field, "value " + Integer.toUnsignedString(v) + " is out of range");
      return v;
    }

    /** A count whose items take at least {@code minBytes} each, checked against what remains. */
    int count(String field, long minBytes) throws EdgeFormatException {
      int c = u32(field);
      if (c * minBytes > body.remaining()) throw error(field, c + " items cannot fit in the " + body.remaining() + " bytes left");
      return c;
    }

    String str(String field) throws EdgeFormatException {
      int len = body.getShort() & 0xffff;
      if (len > body.remaining()) throw error(field, "length " + len + " runs past the end");
      byte[] b = new byte[len];
      body.get(b);
      try {
        return StandardCharsets.UTF_8.newDecoder().onMalformedInput(CodingErrorAction.REPORT).decode(ByteBuffer.wrap(b)).toString();
      } catch (CharacterCodingException e) {
        throw error(field, "not UTF-8");
      }
    }

    interface Build<T> {
      T get();
    }

    <T> T build(String field, Build<T> b) throws EdgeFormatException {
      try {
        return b.get();
      } catch (IllegalArgumentException e) {
        throw error(field, e.getMessage());
      }
    }
  }
}
