package io.actindex.cli;

import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.security.MessageDigest;
import java.util.HexFormat;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import java.util.stream.Stream;

/** Test files: good {@code .npy} files through the encode module's writer, bad ones by hand, CSV, checksums. */
final class Files2 {
  private Files2() {}

  /** float32 rows. */
  static Path floats(Path file, float[][] rows) {
    try (NpyWriter w = NpyWriter.create(file, NpyDtype.FLOAT32, rows[0].length)) {
      for (float[] r : rows) w.write(r, 1);
      w.commit();
      return file;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /** float64 rows. */
  static Path doubles(Path file, double[][] rows) {
    try (NpyWriter w = NpyWriter.create(file, NpyDtype.FLOAT64, rows[0].length)) {
      for (double[] r : rows) w.write(r, 1);
      w.commit();
      return file;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /** 0/1 uint8 rows (one byte per bit, unpacked). */
  static Path bits(Path file, boolean[][] rows) {
    try (NpyWriter w = NpyWriter.create(file, NpyDtype.UINT8, rows[0].length)) {
      byte[] row = new byte[rows[0].length];
      for (boolean[] r : rows) {
        for (int j = 0; j < r.length; j++) row[j] = (byte) (r[j] ? 1 : 0);
        w.writeBytes(row, 1);
      }
      w.commit();
      return file;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /**
   * A {@code .npy} written byte by byte after the NumPy format specification (version 1.0: magic
   * "\x93NUMPY", two version bytes, a little-endian uint16 header length, the header dict padded with
   * spaces and a newline to a multiple of 64 bytes, then the data), with any header text and data.
   */
  static Path rawNpy(Path file, byte[] magic, String dict, byte[] data) {
    byte[] h = dict.getBytes(StandardCharsets.US_ASCII);
    int total = 10 + h.length + 1;
    int pad = (64 - total % 64) % 64;
    ByteBuffer b = ByteBuffer.allocate(total + pad + data.length).order(ByteOrder.LITTLE_ENDIAN);
    b.put(magic).put((byte) 1).put((byte) 0).putShort((short) (h.length + pad + 1)).put(h);
    for (int i = 0; i < pad; i++) b.put((byte) ' ');
    b.put((byte) '\n').put(data);
    return write(file, b.array());
  }

  static final byte[] NPY_MAGIC = {(byte) 0x93, 'N', 'U', 'M', 'P', 'Y'};

  /** Little-endian float32 bytes. */
  static byte[] f32(float... v) {
    ByteBuffer b = ByteBuffer.allocate(4 * v.length).order(ByteOrder.LITTLE_ENDIAN);
    for (float x : v) b.putFloat(x);
    return b.array();
  }

  static Path write(Path file, byte[] bytes) {
    try {
      return Files.write(file, bytes);
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  static Path text(Path file, List<String> lines) {
    try {
      return Files.write(file, lines, StandardCharsets.UTF_8);
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /** SHA-256 of every file under {@code dir}, by relative path (an absent folder gives an empty map). */
  static Map<String, String> checksums(Path dir) {
    Map<String, String> out = new TreeMap<>();
    if (!Files.exists(dir)) return out;
    try (Stream<Path> walk = Files.walk(dir)) {
      for (Path p : walk.filter(Files::isRegularFile).toList()) {
        MessageDigest md = MessageDigest.getInstance("SHA-256");
        out.put(dir.relativize(p).toString(), HexFormat.of().formatHex(md.digest(Files.readAllBytes(p))));
      }
      return out;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    } catch (java.security.NoSuchAlgorithmException e) {
      throw new IllegalStateException(e);
    }
  }
}
