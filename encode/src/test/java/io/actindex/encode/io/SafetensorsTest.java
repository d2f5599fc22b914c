package io.actindex.encode.io;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.encode.Golden;
import io.actindex.core.BadInputException;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * safetensors against golden files built byte by byte from the published format description
 * (8-byte little-endian header length, JSON header, raw little-endian data) by
 * tools/golden/make_npy.py: the reference writer (the Python `safetensors` package) was not
 * available from the registries this project can reach, so the files follow the specification,
 * not the reference implementation's output.
 */
class SafetensorsTest {
  @TempDir Path tmp;

  @Test
  void readsF32F64F16Bf16() throws IOException {
    double[] w = Golden.expected("tensors_w").values();
    double[] b = Golden.expected("tensors_b").values();
    try (SafetensorsReader r = SafetensorsReader.open(Golden.path("tensors.safetensors"))) {
      assertThat(r.metadata()).containsEntry("format", "pt");
      assertThat(r.entries().keySet()).containsExactly("w_f32", "w_f64", "w_f16", "w_bf16", "b");
      assertThat(r.entry("w_f32").shape()).containsExactly(3, 2);
      for (String t : List.of("w_f32", "w_f64", "w_f16", "w_bf16")) assertThat(r.read(t)).as(t).containsExactly(w);
      assertThat(r.read("b")).containsExactly(b);
    }
  }

  @Test
  void writerRoundTrip() throws IOException {
    Path f = tmp.resolve("m.safetensors");
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("a.weight", new SafetensorsWriter.Tensor(new long[] {2, 3}, new double[] {1, 2, 3, 4, 5, 6.5}));
    t.put("a.bias", new SafetensorsWriter.Tensor(new long[] {2}, new double[] {-1, 0.25}));
    SafetensorsWriter.write(f, t, Map.of("by", "test \"quoted\""));
    assertThat(Files.size(f) % 4).isZero();
    try (SafetensorsReader r = SafetensorsReader.open(f)) {
      assertThat(r.read("a.weight")).containsExactly(1, 2, 3, 4, 5, 6.5);
      assertThat(r.read("a.bias")).containsExactly(-1, 0.25);
      assertThat(r.metadata()).containsEntry("by", "test \"quoted\"");
      assertThat(r.entry("a.weight").begin() % 8).isZero();
    }
  }

  private Path withHeader(String json, int dataBytes) throws IOException {
    byte[] h = json.getBytes(StandardCharsets.UTF_8);
    ByteBuffer bb = ByteBuffer.allocate(8 + h.length + dataBytes).order(ByteOrder.LITTLE_ENDIAN);
    bb.putLong(h.length).put(h);
    Path f = Files.createTempFile(tmp, "bad", ".safetensors");
    Files.write(f, bb.array());
    return f;
  }

  @Test
  void headerPointingOutsideTheFileIsRefused() throws IOException {
    Path f = withHeader("{\"w\":{\"dtype\":\"F32\",\"shape\":[4],\"data_offsets\":[0,16]}}", 8);
    assertThatThrownBy(() -> SafetensorsReader.open(f)).isInstanceOf(BadInputException.class)
        .hasMessageContaining(f.toString()).hasMessageContaining("'w'").hasMessageContaining("data_offsets").hasMessageContaining("outside");
    byte[] b = Files.readAllBytes(Golden.path("tensors.safetensors"));
    ByteBuffer.wrap(b).order(ByteOrder.LITTLE_ENDIAN).putLong(0, b.length * 2L);
    Path g = tmp.resolve("long.safetensors");
    Files.write(g, b);
    assertThatThrownBy(() -> SafetensorsReader.open(g)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("header length").hasMessageContaining("outside");
  }

  @Test
  void otherBadHeaders() throws IOException {
    Map<String, String> cases = Map.of(
        "{\"w\":{\"dtype\":\"C64\",\"shape\":[1],\"data_offsets\":[0,8]}}", "unsupported dtype 'C64'",
        "{\"w\":{\"dtype\":\"F32\",\"shape\":[3],\"data_offsets\":[0,8]}}", "needs 12",
        "{\"w\":{\"dtype\":\"F32\",\"shape\":[-2],\"data_offsets\":[0,8]}}", "shape",
        "{\"w\":{\"dtype\":\"F32\",\"shape\":[2]}}", "data_offsets",
        "{\"w\":{\"dtype\":\"F32\",\"shape\":[2],\"data_offsets\":[0,8]}", "malformed",
        "[1,2]", "not a JSON object");
    for (var e : cases.entrySet()) {
      Path f = withHeader(e.getKey(), 8);
      assertThatThrownBy(() -> SafetensorsReader.open(f)).as(e.getKey()).isInstanceOf(BadInputException.class)
          .hasMessageContaining(f.toString()).hasMessageContaining(e.getValue());
    }
    Path hole = withHeader("{\"a\":{\"dtype\":\"F32\",\"shape\":[1],\"data_offsets\":[0,4]},\"b\":{\"dtype\":\"F32\",\"shape\":[1],\"data_offsets\":[8,12]}}", 12);
    assertThatThrownBy(() -> SafetensorsReader.open(hole)).isInstanceOf(BadInputException.class).hasMessageContaining("'b'").hasMessageContaining("hole");
    Path overlap = withHeader("{\"a\":{\"dtype\":\"F32\",\"shape\":[2],\"data_offsets\":[0,8]},\"b\":{\"dtype\":\"F32\",\"shape\":[1],\"data_offsets\":[4,8]}}", 8);
    assertThatThrownBy(() -> SafetensorsReader.open(overlap)).isInstanceOf(BadInputException.class).hasMessageContaining("overlap");
    Path trailing = withHeader("{\"a\":{\"dtype\":\"F32\",\"shape\":[1],\"data_offsets\":[0,4]}}", 12);
    assertThatThrownBy(() -> SafetensorsReader.open(trailing)).isInstanceOf(BadInputException.class).hasMessageContaining("cover 4 data bytes");
    Path tiny = tmp.resolve("tiny.safetensors");
    Files.write(tiny, new byte[] {1, 2, 3});
    assertThatThrownBy(() -> SafetensorsReader.open(tiny)).isInstanceOf(BadInputException.class).hasMessageContaining("tiny.safetensors");
    Path ints = withHeader("{\"n\":{\"dtype\":\"I64\",\"shape\":[1],\"data_offsets\":[0,8]}}", 8);
    try (SafetensorsReader r = SafetensorsReader.open(ints)) {
      assertThatThrownBy(() -> r.read("n")).isInstanceOf(BadInputException.class).hasMessageContaining("'n'").hasMessageContaining("dtype");
    }
  }

  /**
   * A PyTorch model cast to float8 (torch.float8_e4m3fn, saved as F8_E4M3) was refused as "not a
   * floating-point type", which it is: now it says that 8-bit floats are not read; integers keep
   * the old words.
   */
  @Test
  void eightBitFloatsAreRefusedAsUnreadNotAsNonFloat() throws IOException {
    for (String[] c : new String[][] {{"F8_E4M3", "F8_E4M3 (8-bit floating point) is not read (supported: F32, F16, BF16, F64)"},
        {"F8_E5M2", "F8_E5M2 (8-bit floating point) is not read"}, {"I8", "I8 is not a floating-point type (supported"}}) {
      Path f = withHeader("{\"w\":{\"dtype\":\"" + c[0] + "\",\"shape\":[2],\"data_offsets\":[0,2]}}", 2);
      try (SafetensorsReader r = SafetensorsReader.open(f)) {
        assertThatThrownBy(() -> r.read("w")).isInstanceOf(BadInputException.class).hasMessageContaining("tensor 'w': field dtype: " + c[1]);
      }
    }
  }

  @Test
  void jsonParser() {
    Object v = Json.parse(" {\"a\": [1, -2.5e3, true, null, \"x\\u0041\\n\"], \"b\": {}} ");
    assertThat(v).isEqualTo(Map.of("a", java.util.Arrays.asList(1L, -2500.0, true, null, "xA\n"), "b", Map.of()));
    for (String bad : List.of("{\"a\":1,}", "{\"a\" 1}", "[1 2]", "{\"a\":1,\"a\":2}", "\"open", "01x", "{} x"))
      assertThatThrownBy(() -> Json.parse(bad)).as(bad).isInstanceOf(IllegalArgumentException.class);
  }
}
