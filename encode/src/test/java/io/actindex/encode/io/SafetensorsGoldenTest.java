package io.actindex.encode.io;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * actindex's {@link SafetensorsWriter} against the reference reader: {@code
 * golden/torch/own_writer.safetensors} was written by this writer (rerun with {@code
 * -Dactindex.golden.update=true} to rewrite it), then read by {@code safetensors.numpy.load_file}
 * (safetensors 0.8.0, see {@code golden/torch/VERSIONS.txt}) in {@code
 * tools/golden/make_torch_models.py}, which recorded what it read in {@code own_writer_read.txt}.
 * The writer must still produce the same bytes, and the reference reader's values must be ours.
 */
class SafetensorsGoldenTest {
  @TempDir Path tmp;

  /** Where {@code -Dactindex.golden.update=true} writes the golden (Maven runs tests in the module folder). */
  static final Path SOURCE = Path.of("src/test/resources/golden/torch/own_writer.safetensors");

  /** The tensors of the golden file: awkward float32 values, a scalar-like 1-element tensor, a 3-D shape. */
  static Map<String, SafetensorsWriter.Tensor> tensors() {
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("layer.weight", new SafetensorsWriter.Tensor(new long[] {2, 3}, new double[] {-0.0, 1.5, -2.25, 3.4028234663852886e38, 1.1754943508222875e-38, 0.1}));
    t.put("layer.bias", new SafetensorsWriter.Tensor(new long[] {2}, new double[] {1e-45, -7}));
    t.put("one", new SafetensorsWriter.Tensor(new long[] {1}, new double[] {42}));
    t.put("cube", new SafetensorsWriter.Tensor(new long[] {2, 2, 2}, new double[] {0, 1, 2, 3, 4, 5, 6, 7}));
    return t;
  }

  static Map<String, String> metadata() {
    Map<String, String> m = new LinkedHashMap<>();
    m.put("format", "pt");
    m.put("note", "written by actindex, \"quoted\", caf\u00e9");
    return m;
  }

  @Test
  void writerOutputIsByteIdenticalToTheFileTheReferenceReaderRead() throws IOException {
    Path f = tmp.resolve("own.safetensors");
    SafetensorsWriter.write(f, tensors(), metadata());
    if (Boolean.getBoolean("actindex.golden.update")) Files.copy(f, SOURCE, java.nio.file.StandardCopyOption.REPLACE_EXISTING);
    else assertThat(Files.readAllBytes(f)).isEqualTo(Files.readAllBytes(io.actindex.encode.Golden.path("torch/own_writer.safetensors")));
  }

  @Test
  void referenceReaderReadOurValues() throws IOException {
    List<String> lines = Files.readAllLines(io.actindex.encode.Golden.path("torch/own_writer_read.txt"));
    Map<String, String> meta = new LinkedHashMap<>();
    Map<String, List<Double>> values = new LinkedHashMap<>();
    Map<String, String> shapes = new LinkedHashMap<>();
    List<Double> current = null;
    for (String l : lines) {
      if (l.startsWith("meta ")) {
        String[] p = l.split(" ", 3);
        meta.put(p[1], p[2]);
      } else if (l.startsWith("tensor ")) {
        String[] p = l.split(" ");
        assertThat(p[2]).as(p[1]).isEqualTo("float32");
        shapes.put(p[1], p[3]);
        values.put(p[1], current = new ArrayList<>());
      } else {
        current.add(Double.parseDouble(l));
      }
    }
    assertThat(meta).isEqualTo(metadata());
    assertThat(values.keySet()).containsExactlyInAnyOrderElementsOf(tensors().keySet());
    for (var e : tensors().entrySet()) {
      assertThat(shapes.get(e.getKey())).isEqualTo(String.join(",", java.util.Arrays.stream(e.getValue().shape()).mapToObj(Long::toString).toList()));
      List<Double> expected = java.util.Arrays.stream(e.getValue().values()).mapToObj(v -> (double) (float) v).toList();
      assertThat(values.get(e.getKey())).as(e.getKey()).containsExactlyElementsOf(expected);
    }
  }
}
