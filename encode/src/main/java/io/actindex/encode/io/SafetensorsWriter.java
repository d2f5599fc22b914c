package io.actindex.encode.io;

import io.actindex.core.OutputFiles;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.channels.FileChannel;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.Map;

/**
 * Writes a safetensors file (see {@link SafetensorsReader} for the format) with F32 tensors, in
 * the given order, the JSON header padded with spaces to a multiple of 8 bytes. Written to a
 * temporary file and moved into place atomically.
 */
public final class SafetensorsWriter {
  private SafetensorsWriter() {}

  /** One tensor to write: shape and row-major values (stored as float32). */
  public record Tensor(long[] shape, double[] values) {
    public Tensor {
      long c = 1;
      for (long s : shape) c *= s;
      if (c != values.length) throw new IllegalArgumentException("shape holds " + c + " values, got " + values.length);
    }
  }

  public static void write(Path file, Map<String, Tensor> tensors, Map<String, String> metadata) throws IOException {
    StringBuilder h = new StringBuilder("{");
    if (metadata != null && !metadata.isEmpty()) {
      h.append("\"__metadata__\":{");
      boolean first = true;
      for (var e : metadata.entrySet()) {
        h.append(first ? "" : ",").append(Json.quote(e.getKey())).append(':').append(Json.quote(e.getValue()));
        first = false;
      }
      h.append('}');
    }
    long off = 0;
    for (var e : tensors.entrySet()) {
      if (h.length() > 1) h.append(',');
      long bytes = 4L * e.getValue().values().length;
      h.append(Json.quote(e.getKey())).append(":{\"dtype\":\"F32\",\"shape\":[");
      long[] shape = e.getValue().shape();
      for (int i = 0; i < shape.length; i++) h.append(i == 0 ? "" : ",").append(shape[i]);
      h.append("],\"data_offsets\":[").append(off).append(',').append(off + bytes).append("]}");
      off += bytes;
    }
    h.append('}');
    byte[] json = h.toString().getBytes(StandardCharsets.UTF_8);
    int padded = (json.length + 7) / 8 * 8;
    ByteBuffer head = ByteBuffer.allocate(8 + padded).order(ByteOrder.LITTLE_ENDIAN);
    head.putLong(padded).put(json);
    while (head.hasRemaining()) head.put((byte) ' ');
    try (OutputFiles.Temp tmp = OutputFiles.begin(file)) {
      FileChannel ch = tmp.channel();
      ch.write(head.flip());
      for (Tensor t : tensors.values()) {
        ByteBuffer bb = ByteBuffer.allocate(4 * t.values().length).order(ByteOrder.LITTLE_ENDIAN);
        for (double v : t.values()) bb.putFloat((float) v);
        bb.flip();
        while (bb.hasRemaining()) ch.write(bb);
      }
      tmp.commit();
    }
  }
}
