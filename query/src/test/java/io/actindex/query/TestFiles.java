package io.actindex.query;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.LinkedHashMap;
import java.util.Map;

/**
 * Writes the input files of end-to-end tests, independently of the encode module's writers:
 * NumPy {@code .npy} version 1.0 (magic, little-endian header length, a padded Python-dict header;
 * "A Simple File Format for NumPy Arrays", NEP 1, R. Kern, 2007) and safetensors (8-byte
 * little-endian header length, JSON header of dtype/shape/data_offsets, raw data; Hugging Face
 * safetensors format description).
 */
final class TestFiles {
  private TestFiles() {}

  static Path npyFloat32(Path file, int rows, int cols, float[] values) {
    ByteBuffer data = ByteBuffer.allocate(values.length * 4).order(ByteOrder.LITTLE_ENDIAN);
    for (float v : values) data.putFloat(v);
    return npy(file, "<f4", rows, cols, data.array());
  }

  static Path npyUint8(Path file, int rows, int cols, byte[] values) {
    return npy(file, "|u1", rows, cols, values);
  }

  private static Path npy(Path file, String descr, int rows, int cols, byte[] data) {
    String dict = "{'descr': '" + descr + "', 'fortran_order': False, 'shape': (" + rows + ", " + cols + "), }";
    int unpadded = 10 + dict.length() + 1;
    int pad = (64 - unpadded % 64) % 64;
    String header = dict + " ".repeat(pad) + "\n";
    ByteBuffer b = ByteBuffer.allocate(10 + header.length() + data.length).order(ByteOrder.LITTLE_ENDIAN);
    b.put((byte) 0x93).put("NUMPY".getBytes(StandardCharsets.US_ASCII)).put((byte) 1).put((byte) 0);
    b.putShort((short) header.length()).put(header.getBytes(StandardCharsets.US_ASCII)).put(data);
    return write(file, b.array());
  }

  /** One float32 tensor: shape and row-major values. */
  record Tensor(int[] shape, float[] values) {}

  static Path safetensors(Path file, Map<String, Tensor> tensors) {
    StringBuilder json = new StringBuilder("{");
    long offset = 0;
    Map<String, Tensor> ordered = new LinkedHashMap<>(tensors);
    for (var e : ordered.entrySet()) {
      long end = offset + 4L * e.getValue().values().length;
      StringBuilder shape = new StringBuilder();
      for (int d : e.getValue().shape()) shape.append(shape.isEmpty() ? "" : ",").append(d);
      if (json.length() > 1) json.append(',');
      json.append('"').append(e.getKey()).append("\":{\"dtype\":\"F32\",\"shape\":[").append(shape)
          .append("],\"data_offsets\":[").append(offset).append(',').append(end).append("]}");
      offset = end;
    }
    json.append('}');
    byte[] header = json.toString().getBytes(StandardCharsets.UTF_8);
    ByteBuffer b = ByteBuffer.allocate(8 + header.length + (int) offset).order(ByteOrder.LITTLE_ENDIAN);
    b.putLong(header.length).put(header);
    for (Tensor t : ordered.values()) for (float v : t.values()) b.putFloat(v);
    return write(file, b.array());
  }

  static Path csv(Path file, String text) {
    return write(file, text.getBytes(StandardCharsets.UTF_8));
  }

  private static Path write(Path file, byte[] bytes) {
    try {
      Files.write(file, bytes);
      return file;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }
}
