package io.actindex.encode.mlp;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.encode.CodeStream;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.encode.Golden;
import io.actindex.encode.io.SafetensorsWriter;
import io.actindex.core.BadInputException;
import java.io.IOException;
import java.nio.file.Path;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.ejml.data.DMatrixRMaj;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class MlpTest {
  @TempDir Path tmp;

  private Path model(Map<String, SafetensorsWriter.Tensor> t) throws IOException {
    Path f = tmp.resolve("m" + t.hashCode() + ".safetensors");
    SafetensorsWriter.write(f, t, null);
    return f;
  }

  private static SafetensorsWriter.Tensor zeros(long... shape) {
    long n = 1;
    for (long s : shape) n *= s;
    return new SafetensorsWriter.Tensor(shape, new double[(int) n]);
  }

  @Test
  void aBiasWithoutItsWeightIsRefused() throws IOException {
    // A file cut short or saved from the wrong state dict: '2.bias' without '2.weight' used to be
    // ignored, so layer 0 became the output layer and a hidden layer vanished from the codes.
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("0.weight", zeros(4, 3));
    t.put("0.bias", zeros(4));
    t.put("2.weight", zeros(2, 4));
    t.put("2.bias", zeros(2));
    t.put("4.bias", zeros(3));
    Path orphan = model(t);
    assertThatThrownBy(() -> Mlp.load(orphan, null)).isInstanceOf(BadInputException.class)
        .hasMessageContaining(orphan.toString()).hasMessageContaining("'4.bias'").hasMessageContaining("'4.weight'");
  }

  /**
   * Keras and JAX/Flax store a dense layer's kernel as [in, out], named "kernel" (from memory of
   * those libraries: Flax "Dense_0.kernel", Keras "dense/kernel:0"); the refusal names one and the
   * transposition it needs.
   */
  @Test
  void denseKernelsAreRefusedWithTheTranspositionTheyNeed() throws IOException {
    for (String name : new String[] {"params.Dense_0.kernel", "dense/kernel:0"}) {
      Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
      t.put(name, zeros(3, 4));
      t.put(name.replace("kernel", "bias"), zeros(4));
      Path f = model(t);
      assertThatThrownBy(() -> Mlp.load(f, null)).as(name).isInstanceOf(BadInputException.class).hasMessageContaining(f.toString())
          .hasMessageContaining("no tensor named NAME.weight").hasMessageContaining(BadInputException.quote(name))
          .hasMessageContaining("[in, out]").hasMessageContaining("transposed");
    }
    Map<String, SafetensorsWriter.Tensor> other = new LinkedHashMap<>();
    other.put("w", zeros(3, 4));
    Path f = model(other);
    assertThatThrownBy(() -> Mlp.load(f, null)).isInstanceOf(BadInputException.class).hasMessageContaining("no tensor named NAME.weight")
        .hasMessageNotContaining("kernel");
  }

  /**
   * PyTorch's weight_norm saves a layer's weight as two tensors (from memory of torch.nn.utils:
   * "0.parametrizations.weight.original0/1" for the parametrization form, "0.weight_g"/"0.weight_v"
   * for the older one); the refusal said "'0.bias' has no '0.weight': is the file complete?".
   */
  @Test
  void parametrizedWeightsAreRefusedSayingToRemoveTheParametrization() throws IOException {
    for (String[] names : new String[][] {{"0.parametrizations.weight.original0", "0.parametrizations.weight.original1"}, {"0.weight_g", "0.weight_v"}}) {
      Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
      t.put("0.bias", zeros(4));
      t.put(names[0], zeros(4, 1));
      t.put(names[1], zeros(4, 3));
      t.put("2.weight", zeros(2, 4));
      Path f = model(t);
      assertThatThrownBy(() -> Mlp.load(f, null)).as(names[0]).isInstanceOf(BadInputException.class).hasMessageContaining(f.toString())
          .hasMessageContaining("parametrized weight").hasMessageContaining("remove_parametrizations").hasMessageNotContaining("is the file complete");
    }
  }

  @Test
  void hiddenActivationsThatOverflowAreRefusedNamingTheRow() throws IOException {
    // 1e200 * 1e200 overflows double: +inf, and +inf - inf = NaN, which ReLU used to turn into an
    // off bit without a word. Row 1 is fine, row 2 overflows in layer 'a' unit 1.
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("a.weight", new SafetensorsWriter.Tensor(new long[] {2, 2}, new double[] {1, 0, 1e20, -1e20}));
    t.put("b.weight", new SafetensorsWriter.Tensor(new long[] {1, 2}, new double[] {1, 1}));
    Path m = model(t);
    double[][] rows = {{1, 2}, {3, 4}, {1e300, 1e300}};
    try (CodeStream s = Encoders.model(Mlp.load(m, List.of("a", "b")), "m.safetensors",
        () -> io.actindex.encode.io.ArrayMatrixReader.of("in.npy", rows), EncodeOptions.positive())) {
      assertThatThrownBy(() -> s.next(10)).isInstanceOf(BadInputException.class)
          .hasMessageContaining("in.npy: row 2").hasMessageContaining("layer 'a', unit 1").hasMessageContaining("m.safetensors");
    }
  }

  /** Inputs saved as features by examples ((3, 50) for 50 rows of 3 features) get a hint to transpose them; other widths do not. */
  @Test
  void inputsSavedTransposedGetAHint() throws IOException {
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("0.weight", zeros(4, 3));
    t.put("2.weight", zeros(2, 4));
    Path m = model(t);
    for (int rows : new int[] {3, 7}) {
      Path in = tmp.resolve("in" + rows + ".npy");
      try (var w = io.actindex.encode.io.NpyWriter.create(in, io.actindex.encode.io.NpyDtype.FLOAT32, 50)) {
        w.write(new double[rows * 50], rows);
        w.commit();
      }
      var refused = assertThatThrownBy(() -> Encoders.model(m, in, EncodeOptions.positive()).next(10)).as("%d rows", rows)
          .isInstanceOf(BadInputException.class).hasMessageContaining("rows have 50 values").hasMessageContaining("takes 3");
      if (rows == 3) refused.hasMessageContaining("the file has 3 rows").hasMessageContaining("a.T");
      else refused.hasMessageNotContaining("a.T");
    }
  }

  @Test
  void shapeMismatchesAreRefused() throws IOException {
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("fc1.weight", zeros(4, 3));
    t.put("fc2.weight", zeros(2, 5));
    Path broken = model(t);
    assertThatThrownBy(() -> Mlp.load(broken, null)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("layer fc2 (weight [2, 5])").hasMessageContaining("takes 5 inputs").hasMessageContaining("gives 4");
    t.put("fc2.weight", zeros(2, 4));
    t.put("fc1.bias", zeros(5));
    Path badBias = model(t);
    assertThatThrownBy(() -> Mlp.load(badBias, null)).isInstanceOf(BadInputException.class).hasMessageContaining("fc1.bias");
    t.put("fc1.bias", zeros(4));
    Path ok = model(t);
    assertThat(Mlp.load(ok, null).hiddenNames()).containsExactly("fc1");
    // inputs of the wrong width: the XOR inputs have 2 columns, this model takes 3
    assertThatThrownBy(() -> Encoders.model(ok, Golden.path("xor_inputs.npy"), EncodeOptions.positive())).isInstanceOf(BadInputException.class)
        .hasMessageContaining("xor_inputs.npy").hasMessageContaining("2 values").hasMessageContaining("takes 3");
    assertThatThrownBy(() -> Encoders.model(Golden.path("xor.safetensors"), Golden.path("xor_inputs.npy"), new EncodeOptions(io.actindex.encode.BinarizeRule.POSITIVE, 0, List.of("fc9"))))
        .isInstanceOf(BadInputException.class).hasMessageContaining("fc9");
    Map<String, SafetensorsWriter.Tensor> none = new LinkedHashMap<>();
    none.put("w", zeros(2, 2));
    Path noNames = model(none);
    assertThatThrownBy(() -> Mlp.load(noNames, null)).isInstanceOf(BadInputException.class).hasMessageContaining("NAME.weight");
  }

  @Test
  void explicitOrderAndSaveLoadRoundTrip() throws IOException {
    Mlp xor = Mlp.load(Golden.path("xor.safetensors"), List.of("0", "2"));
    Path f = tmp.resolve("copy.safetensors");
    xor.save(f, Map.of("note", "copy"));
    Mlp back = Mlp.load(f, null);
    DMatrixRMaj x = new DMatrixRMaj(XorNetworkTest.X);
    assertThat(back.forward(x)[1].data).containsExactly(xor.forward(x)[1].data);
    assertThatThrownBy(() -> Mlp.load(Golden.path("xor.safetensors"), List.of("2", "0"))).isInstanceOf(BadInputException.class);
  }

  @Test
  void trainerIsDeterministicAndSavedModelComputesTheSame() throws IOException {
    double[][] x = new double[40][3];
    int[] y = new int[40];
    java.util.SplittableRandom r = new java.util.SplittableRandom(5);
    for (int i = 0; i < 40; i++) {
      for (int j = 0; j < 3; j++) x[i][j] = r.nextDouble(-1, 1);
      y[i] = x[i][0] + x[i][1] > 0 ? 1 : 0;
    }
    MlpTrainer.Config cfg = new MlpTrainer.Config(new int[] {8, 4}, 30, 8, 1e-2, 42);
    Mlp a = MlpTrainer.train(x, y, 2, cfg), b = MlpTrainer.train(x, y, 2, cfg);
    for (int l = 0; l < 3; l++) assertThat(a.layers().get(l).weight().data).containsExactly(b.layers().get(l).weight().data);
    assertThat(a.hiddenNames()).containsExactly("0", "2");
    Path f = tmp.resolve("t.safetensors");
    a.save(f, null);
    Mlp back = Mlp.load(f, null);
    DMatrixRMaj xm = new DMatrixRMaj(x);
    assertThat(back.forward(xm)[2].data).containsExactly(a.forward(xm)[2].data);
    int correct = 0;
    int[] p = a.predict(xm);
    for (int i = 0; i < 40; i++) if (p[i] == y[i]) correct++;
    assertThat(correct).as("a linearly separable toy set is learned").isGreaterThanOrEqualTo(36);
  }

  @Test
  void medianRuleOnHiddenLayersRoundTripsThroughProperties() throws IOException {
    try (CodeStream s = Encoders.model(Golden.path("xor.safetensors"), Golden.path("xor_inputs.npy"),
        new EncodeOptions(io.actindex.encode.BinarizeRule.MEDIAN, 0, null))) {
      // hidden values per unit over the 4 inputs: (0,1,1,2) median 1, (0,0,0,1) median 0
      assertThat(s.options().medians().get("0")).containsExactly(1, 0);
      var codes = io.actindex.encode.EncodersTest.all(s, 10);
      assertThat(new long[] {codes.code(0)[0], codes.code(1)[0], codes.code(2)[0], codes.code(3)[0]}).containsExactly(0b00, 0b00, 0b00, 0b11);
    }
  }
}
