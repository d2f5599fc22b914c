package io.actindex.encode.io;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Names read from users' files come out in Unicode NFC: "café" saved with a combining accent (NFD,
 * "cafe" + U+0301, as macOS file names and some tools write it) and precomposed (NFC, U+00E9) print
 * alike but compared unequal, so an index built from one form refused queries, --layers and
 * --where written in the other (the two forms: Unicode Standard Annex #15, from memory).
 */
class UnicodeNamesTest {
  @TempDir Path tmp;

  static final String NFD = "cafe\u0301", NFC = "caf\u00e9";

  private Path npz(String name, String... members) throws Exception {
    Path f = tmp.resolve(name);
    try (NpzWriter z = NpzWriter.create(f)) {
      double v = 1;
      for (String m : members) z.member(m, NpyDtype.FLOAT32, 2).write(new double[] {v++, v++}, 1);
      z.commit();
    }
    return f;
  }

  @Test
  void npzMemberNamesAreNfcAndFoundInEitherForm() throws Exception {
    assertThat(NFD).isNotEqualTo(NFC);
    try (NpzReader z = NpzReader.open(npz("nfd.npz", NFD, "b"))) {
      assertThat(z.names()).containsExactly(NFC, "b");
      for (String asked : List.of(NFC, NFD))
        try (NpyReader r = z.member(asked)) {
          double[] out = new double[2];
          assertThat(r.read(out, 1)).isEqualTo(1);
          assertThat(out).containsExactly(1, 2);
        }
    }
    Path both = npz("both.npz", NFD, NFC);
    assertThatThrownBy(() -> NpzReader.open(both)).isInstanceOf(BadInputException.class).hasMessageContaining("both.npz")
        .hasMessageContaining("two members named").hasMessageContaining("two Unicode forms");
  }

  @Test
  void safetensorsNamesAreNfcAndFoundInEitherForm() throws Exception {
    Path f = tmp.resolve("nfd.safetensors");
    SafetensorsWriter.write(f, Map.of(NFD + ".weight", new SafetensorsWriter.Tensor(new long[] {1, 2}, new double[] {3, 4})), Map.of());
    try (SafetensorsReader r = SafetensorsReader.open(f)) {
      assertThat(r.entries().keySet()).containsExactly(NFC + ".weight");
      assertThat(r.read(NFD + ".weight")).containsExactly(3, 4);
      assertThat(r.read(NFC + ".weight")).containsExactly(3, 4);
    }
    Map<String, SafetensorsWriter.Tensor> both = new LinkedHashMap<>();
    both.put(NFD + ".weight", new SafetensorsWriter.Tensor(new long[] {1, 2}, new double[] {3, 4}));
    both.put(NFC + ".weight", new SafetensorsWriter.Tensor(new long[] {1, 2}, new double[] {5, 6}));
    Path g = tmp.resolve("both.safetensors");
    SafetensorsWriter.write(g, both, Map.of());
    assertThatThrownBy(() -> SafetensorsReader.open(g)).isInstanceOf(BadInputException.class).hasMessageContaining("both.safetensors")
        .hasMessageContaining("two tensors named").hasMessageContaining("two Unicode forms");
  }

  @Test
  void csvHeaderNamesAreNfc() throws Exception {
    for (String form : List.of(NFD, NFC)) {
      Path f = Files.writeString(tmp.resolve("h.csv"), form + ",x\n1,2\n", StandardCharsets.UTF_8);
      try (CsvMatrixReader r = CsvMatrixReader.open(f)) {
        assertThat(r.columnNames()).containsExactly(NFC, "x");
      }
    }
  }
}
