package io.actindex.encode.mlp;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.encode.CodeStream;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.encode.EncodersTest;
import io.actindex.encode.Golden;
import io.actindex.core.CodeBlock;
import java.io.IOException;
import org.ejml.data.DMatrixRMaj;
import org.junit.jupiter.api.Test;

/**
 * The XOR network of Goodfellow, Bengio & Courville, "Deep Learning" (MIT Press, 2016), section
 * 6.1: W = [[1, 1], [1, 1]], c = [0, -1], w = [1, -2], b = 0. The book's worked example gives the
 * outputs 0, 1, 1, 0 for the inputs (0,0), (0,1), (1,0), (1,1) and the hidden values h = (0,0),
 * (1,0), (1,0), (2,1) after the ReLU. Stored as safetensors with PyTorch naming ("0.weight" [2,2]
 * = W transposed, which is W itself as it is symmetric; "2.weight" [1,2] = w) by
 * tools/golden/make_npy.py.
 */
class XorNetworkTest {
  static final double[][] X = {{0, 0}, {0, 1}, {1, 0}, {1, 1}};

  @Test
  void publishedWeightsGiveThePublishedOutputsAndHiddenValues() throws IOException {
    Mlp mlp = Mlp.load(Golden.path("xor.safetensors"), null);
    assertThat(mlp.layers().stream().map(Mlp.Layer::name)).containsExactly("0", "2");
    DMatrixRMaj x = new DMatrixRMaj(X);
    DMatrixRMaj[] out = mlp.forward(x);
    assertThat(out[0].data).containsExactly(0, 0, 1, 0, 1, 0, 2, 1);
    assertThat(out[1].data).containsExactly(0, 1, 1, 0);
  }

  @Test
  void exportedActivationsReadBackAsTheSameCodes(@org.junit.jupiter.api.io.TempDir java.nio.file.Path tmp) throws IOException {
    Mlp mlp = Mlp.load(Golden.path("xor.safetensors"), null);
    for (String name : new String[] {"h.npz", "h.npy"}) {
      java.nio.file.Path out = tmp.resolve(name);
      assertThat(Encoders.exportActivations(mlp, "xor", Golden.path("xor_inputs.npy"), null, out)).isEqualTo(4);
      EncodeOptions o = new EncodeOptions(io.actindex.encode.BinarizeRule.POSITIVE, 0, java.util.List.of("0"));
      try (CodeStream s = Encoders.activations(out, o)) {
        CodeBlock c = EncodersTest.all(s, 2);
        assertThat(s.layout().toString()).isEqualTo("0:2");
        assertThat(new long[] {c.code(0)[0], c.code(1)[0], c.code(2)[0], c.code(3)[0]}).containsExactly(0b00, 0b01, 0b01, 0b11);
      }
      try (io.actindex.encode.io.MatrixReader r = name.endsWith(".npy")
          ? io.actindex.encode.io.NpyReader.open(out) : io.actindex.encode.io.NpzReader.open(out).member("0")) {
        double[] v = new double[8];
        assertThat(r.read(v, 4)).isEqualTo(4);
        assertThat(v).containsExactly(0, 0, 1, 0, 1, 0, 2, 1);
      }
    }
    try (var files = java.nio.file.Files.list(tmp)) {
      assertThat(files.map(p -> p.getFileName().toString()).sorted().toList()).containsExactly("h.npy", "h.npz");
    }
  }

  /** Exporting over the inputs file would replace it with activations: refused, the inputs unchanged. */
  @Test
  void anExportOverItsOwnInputsIsRefused(@org.junit.jupiter.api.io.TempDir java.nio.file.Path tmp) throws IOException {
    Mlp mlp = Mlp.load(Golden.path("xor.safetensors"), null);
    java.nio.file.Path inputs = java.nio.file.Files.copy(Golden.path("xor_inputs.npy"), tmp.resolve("x.npy"));
    byte[] before = java.nio.file.Files.readAllBytes(inputs);
    org.assertj.core.api.Assertions.assertThatThrownBy(() -> Encoders.exportActivations(mlp, "xor", inputs, null, tmp.resolve(".").resolve("x.npy")))
        .isInstanceOf(io.actindex.core.BadInputException.class).hasMessageContaining("x.npy").hasMessageContaining("`out` is the same file as the input `inputs`");
    assertThat(java.nio.file.Files.readAllBytes(inputs)).isEqualTo(before);
    try (var files = java.nio.file.Files.list(tmp)) {
      assertThat(files.map(p -> p.getFileName().toString()).toList()).containsExactly("x.npy");
    }
  }

  @Test
  void hiddenOnOffPatternsFromTheWorkedExample() throws IOException {
    // h = (0,0) -> both off; (1,0) -> first on; (2,1) -> both on. Bit 0 = first hidden unit.
    try (CodeStream s = Encoders.model(Golden.path("xor.safetensors"), Golden.path("xor_inputs.npy"), EncodeOptions.positive())) {
      assertThat(s.layout().toString()).isEqualTo("0:2");
      CodeBlock c = EncodersTest.all(s, 3);
      assertThat(new long[] {c.code(0)[0], c.code(1)[0], c.code(2)[0], c.code(3)[0]}).containsExactly(0b00, 0b01, 0b01, 0b11);
      // the second hidden unit fires only on (1,1); none is dead or always on
      assertThat(s.stats().firingCounts()).containsExactly(3, 1);
      assertThat(s.stats().dead()).isEmpty();
      assertThat(s.stats().alwaysOn()).isEmpty();
    }
  }
}
