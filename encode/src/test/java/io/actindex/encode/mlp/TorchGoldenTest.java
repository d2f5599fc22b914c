package io.actindex.encode.mlp;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.encode.BinarizeRule;
import io.actindex.encode.CodeStream;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.encode.Golden;
import io.actindex.encode.io.NpyReader;
import java.io.IOException;
import java.nio.file.Files;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * actindex's codes of models saved by PyTorch equal PyTorch's own activations, bit for bit.
 *
 * <p>Reference: PyTorch 2.13.0 (CPU) {@code nn.Sequential} / {@code nn.Linear} models and their
 * hidden activations captured with forward hooks, saved with the reference writer {@code
 * safetensors.torch.save_file} (safetensors 0.8.0; NumPy 2.4.6 for the {@code .npy} files) by
 * {@code tools/golden/make_torch_models.py}; versions in {@code golden/torch/VERSIONS.txt}. A code
 * bit is {@code activation > 0}. Each model's {@code .txt} says what actindex must do: order the
 * layers by the numbers in the names, by the shapes, refuse (names and shapes allow several
 * orders) and then use the order given, and whether the file has an output layer. The codes go
 * through {@link Encoders#model}, the path {@code build --model --inputs} uses.
 */
class TorchGoldenTest {

  @ParameterizedTest
  @ValueSource(strings = {"seq_deep", "seq_trunk", "named_square", "fc_out", "fc_square", "enc_dec_head"})
  void codesEqualPyTorchActivationsAboveZero(String model) throws IOException {
    Map<String, String> spec = new LinkedHashMap<>();
    for (String l : Files.readAllLines(Golden.path("torch/" + model + ".txt"))) spec.put(l.substring(0, l.indexOf(' ')), l.substring(l.indexOf(' ') + 1));
    List<String> forward = List.of(spec.get("forward").split(","));
    List<String> hidden = List.of(spec.get("hidden").split(","));
    boolean output = spec.get("output").equals("yes");
    var file = Golden.path("torch/" + model + ".safetensors");
    var inputs = Golden.path("torch/" + model + "_inputs.npy");
    EncodeOptions o = EncodeOptions.positive().withModel(null, output);
    String how = spec.get("order");
    if (how.startsWith("refuse:")) {
      EncodeOptions undecided = o;
      // the names give no order and square layers chain in several: refused, with the candidates and the option named
      assertThatThrownBy(() -> Encoders.model(file, inputs, undecided).close()).isInstanceOf(BadInputException.class)
          .hasMessageContaining(file.getFileName().toString()).hasMessageContaining("`layerOrder`")
          .hasMessageContaining(String.join(",", forward)).hasMessageNotContaining("\n");
      o = o.withModel(forward, output);
    }
    try (CodeStream s = Encoders.model(file, inputs, o)) {
      assertThat(s.options().layerOrder()).as("order used").containsExactlyElementsOf(forward);
      assertThat(s.layout().segments().stream().map(x -> x.name()).toList()).containsExactlyElementsOf(hidden);
      assertThat(s.notes()).anySatisfy(n -> assertThat(n).contains("code layers " + String.join(", ", hidden))
          .contains(output ? "output layer " + forward.getLast() : "no output layer")
          .contains(how.equals("names") ? "numbers in the names" : how.equals("shapes") ? "weight shapes" : "as given"));
      assertCodesAre(model, hidden, Encoders.readAll(s), 0);
    }
  }

  /**
   * Checks {@code codes} bit for bit against PyTorch's activations of {@code hidden} above {@code
   * t}, and that both states occur (equal codes cannot then come from all-zero or all-one layers).
   */
  private static void assertCodesAre(String model, List<String> hidden, CodeBlock codes, double t) throws IOException {
    int bitsBefore = 0, on = 0, total = 0;
    for (String layer : hidden) {
      try (NpyReader r = NpyReader.open(Golden.path("torch/" + model + "_act_" + layer + ".npy"))) {
        int n = (int) r.rows(), w = r.cols();
        double[] a = new double[n * w];
        assertThat(r.read(a, n)).isEqualTo(n);
        assertThat(codes.size()).isEqualTo(n);
        for (int i = 0; i < n; i++)
          for (int j = 0; j < w; j++) {
            int bit = bitsBefore + j;
            boolean ours = (codes.words()[i * codes.layout().words() + (bit >>> 6)] >>> (bit & 63) & 1) != 0;
            boolean torch = a[i * w + j] > t;
            if (ours != torch) throw new AssertionError(model + ": row " + i + ", layer " + layer + ", unit " + j + ": actindex " + ours + ", PyTorch " + torch);
            on += torch ? 1 : 0;
            total++;
          }
        bitsBefore += w;
      }
    }
    assertThat(bitsBefore).isEqualTo(codes.layout().bits());
    assertThat(on).as("units on").isBetween(1, total - 1);
  }

  /**
   * {@code --threshold T} with a model compares its hidden activations after ReLU with {@code T}
   * (PyTorch's hooked activations above T, bit for bit). Those activations are 0 or more
   * (torch.nn.ReLU: max(0, x)), so a T below 0 turned every unit on in every row: an index where
   * every distance is 0, built with exit code 0. Now refused, naming the file.
   */
  @org.junit.jupiter.api.Test
  void aThresholdComparesActivationsAfterReluAndBelowZeroIsRefused() throws IOException {
    var file = Golden.path("torch/seq_trunk.safetensors");
    var inputs = Golden.path("torch/seq_trunk_inputs.npy");
    try (CodeStream s = Encoders.model(file, inputs, new EncodeOptions(BinarizeRule.THRESHOLD, 0.15, null).withModel(null, false))) {
      assertCodesAre("seq_trunk", List.of("0", "2"), Encoders.readAll(s), 0.15); // no activation within 3e-4 of 0.15
    }
    for (double t : new double[] {-0.25, -1e-9})
      assertThatThrownBy(() -> Encoders.model(file, inputs, new EncodeOptions(BinarizeRule.THRESHOLD, t, null).withModel(null, false)).close())
          .isInstanceOf(BadInputException.class).hasMessageContaining("seq_trunk.safetensors").hasMessageContaining("below 0")
          .hasMessageContaining("after ReLU");
  }

  /**
   * The golden is sensitive to the order: text order of the hidden layers of the 12-layer
   * nn.Sequential (0, 10, 12, ..., 2, 20, 4, 6, 8, then 22) chains too, and gives other codes.
   */
  @org.junit.jupiter.api.Test
  void textOrderOfTheDeepSequentialWouldGiveOtherCodes() throws IOException {
    var file = Golden.path("torch/seq_deep.safetensors");
    var inputs = Golden.path("torch/seq_deep_inputs.npy");
    List<String> alphabetical = Arrays.stream("0,10,12,14,16,18,2,20,4,6,8,22".split(",")).toList();
    try (CodeStream right = Encoders.model(file, inputs, EncodeOptions.positive());
        CodeStream wrong = Encoders.model(file, inputs, EncodeOptions.positive().withModel(alphabetical, true))) {
      assertThat(right.options().layerOrder()).isNotEqualTo(alphabetical);
      CodeBlock a = Encoders.readAll(right), b = Encoders.readAll(wrong);
      assertThat(a.words()).isNotEqualTo(b.words());
    }
  }

  /**
   * Files PyTorch writes that are not a plain stack of linear layers are refused, never run as
   * one: a BatchNorm1d model (its scale is a one-dimensional ".weight"), the same with {@code
   * affine=False} (only running statistics beside the linear layers: ignoring them would run
   * another network with no error), and torch.save checkpoints, zip and legacy pickle (written by
   * PyTorch 2.13.0, tools/golden/make_torch_models.py).
   */
  @ParameterizedTest
  @ValueSource(strings = {"refuse_batchnorm.safetensors:normalization layer's scale", "refuse_batchnorm_stats.safetensors:running statistics",
    "refuse_checkpoint_zip.pt:PyTorch checkpoint", "refuse_checkpoint_pickle.pt:PyTorch checkpoint"})
  void normalizationLayersAndTorchCheckpointsAreRefused(String fileAndWhy) {
    String name = fileAndWhy.substring(0, fileAndWhy.indexOf(':')), why = fileAndWhy.substring(fileAndWhy.indexOf(':') + 1);
    var file = Golden.path("torch/" + name);
    var inputs = Golden.path("torch/fc_out_inputs.npy");
    assertThatThrownBy(() -> Encoders.model(file, inputs, EncodeOptions.positive()).close()).isInstanceOf(BadInputException.class)
        .hasMessageContaining(name).hasMessageContaining(why).hasMessageNotContaining("\n")
        .hasMessageContaining(name.endsWith(".pt") ? "safetensors.torch.save_file" : "`Source.activations`");
  }
}
