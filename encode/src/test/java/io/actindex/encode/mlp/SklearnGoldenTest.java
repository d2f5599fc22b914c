package io.actindex.encode.mlp;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.encode.CodeStream;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.encode.Golden;
import io.actindex.encode.io.NpyReader;
import java.io.IOException;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * A scikit-learn {@code MLPClassifier} (ReLU) saved the way a user would: its codes equal
 * scikit-learn's forward pass bit for bit once the weights are saved as {@code [out, in]}, and the
 * ways a user saves it first ({@code np.savez} of the arrays, {@code coefs_} untransposed) are
 * refused naming the fix.
 *
 * <p>Reference: scikit-learn 1.9.1 {@code sklearn.neural_network.MLPClassifier}, whose documented
 * attributes are {@code coefs_[i]}, the weights of layer i as [in, out], and {@code intercepts_[i]};
 * hidden activations {@code max(0, X @ coefs_[i] + intercepts_[i])} computed by {@code
 * tools/golden/make_sklearn_mlp.py} (NumPy 2.4.6, safetensors 0.8.0; outputs in {@code
 * golden/sklearn/}, versions in its VERSIONS.txt), trained on scikit-learn's bundled UCI digits.
 */
class SklearnGoldenTest {

  @ParameterizedTest
  @ValueSource(strings = {"mlp.safetensors", "mlp_f32.safetensors"})
  void codesEqualScikitLearnHiddenActivationsAboveZero(String model) throws IOException {
    try (CodeStream s = Encoders.model(Golden.path("sklearn/" + model), Golden.path("sklearn/inputs.npy"), EncodeOptions.positive());
        NpyReader ref = NpyReader.open(Golden.path("sklearn/codes.npy"))) {
      assertThat(s.options().layerOrder()).containsExactly("0", "1", "2");
      assertThat(s.layout().toString()).isEqualTo("0:24,1:12");
      CodeBlock codes = Encoders.readAll(s);
      int n = (int) ref.rows(), w = ref.cols();
      double[] expected = new double[n * w];
      assertThat(ref.read(expected, n)).isEqualTo(n);
      assertThat(codes.size()).isEqualTo(n);
      assertThat(codes.layout().bits()).isEqualTo(w);
      int on = 0;
      for (int i = 0; i < n; i++)
        for (int j = 0; j < w; j++) {
          boolean ours = (codes.words()[i * codes.layout().words() + (j >>> 6)] >>> (j & 63) & 1) != 0;
          boolean sklearn = expected[i * w + j] != 0;
          if (ours != sklearn) throw new AssertionError(model + ": row " + i + ", unit " + j + ": actindex " + ours + ", scikit-learn " + sklearn);
          on += sklearn ? 1 : 0;
        }
      assertThat(on).as("units on").isBetween(1, n * w - 1);
    }
  }

  /**
   * {@code np.savez(*coefs_, *intercepts_)} is a zip archive of {@code .npy} members: refused as an
   * {@code .npz} (it was called a PyTorch checkpoint), and {@code coefs_} saved untransposed is
   * refused as {@code [in, out]} whether the names are numbered (the shapes do not chain) or not
   * (the shapes chain backwards and the biases fit the weights' second dimension). The fix named is
   * a C-ordered copy: safetensors.numpy 0.8.0 writes a bare {@code W.T} view's memory as it lies
   * (seen here), so the advice "save W.T" gave a file that loads without error and holds
   * other weights.
   */
  @ParameterizedTest
  @ValueSource(strings = {"coefs.npz:a NumPy .npz archive", "untransposed.safetensors:scikit-learn's coefs_",
    "named_untransposed.safetensors:scikit-learn's coefs_"})
  void filesSavedAsScikitLearnHoldsTheArraysAreRefusedNamingTheFix(String spec) {
    String file = spec.substring(0, spec.indexOf(':')), mention = spec.substring(spec.indexOf(':') + 1);
    assertThatThrownBy(() -> Encoders.model(Golden.path("sklearn/" + file), Golden.path("sklearn/inputs.npy"), EncodeOptions.positive()).close())
        .isInstanceOf(BadInputException.class).hasMessageContaining(file).hasMessageContaining(mention).hasMessageContaining("np.ascontiguousarray(")
        .hasMessageNotContaining("PyTorch checkpoint").hasMessageNotContaining("\n");
  }

  /**
   * A dict written by hand that leaves out one intercept runs with a bias of 0 there (nn.Linear may
   * have no bias, so it is not refused), and the model line says so; a model without any bias
   * gets no such note.
   */
  @Test
  void aBiasMissingBesideTheOthersIsNoted(@org.junit.jupiter.api.io.TempDir java.nio.file.Path tmp) throws IOException {
    java.util.Map<String, io.actindex.encode.io.SafetensorsWriter.Tensor> all = new java.util.LinkedHashMap<>(), noBias = new java.util.LinkedHashMap<>();
    try (var r = io.actindex.encode.io.SafetensorsReader.open(Golden.path("sklearn/mlp.safetensors"))) {
      for (String name : r.entries().keySet()) {
        var t = new io.actindex.encode.io.SafetensorsWriter.Tensor(r.entry(name).shape(), r.read(name));
        if (!name.equals("1.bias")) all.put(name, t);
        if (name.endsWith(".weight")) noBias.put(name, t);
      }
    }
    var missing = tmp.resolve("missing.safetensors");
    var none = tmp.resolve("none.safetensors");
    io.actindex.encode.io.SafetensorsWriter.write(missing, all, java.util.Map.of());
    io.actindex.encode.io.SafetensorsWriter.write(none, noBias, java.util.Map.of());
    try (CodeStream s = Encoders.model(missing, Golden.path("sklearn/inputs.npy"), EncodeOptions.positive())) {
      assertThat(s.notes()).anySatisfy(n -> assertThat(n).contains("1 has no .bias tensor (taken as 0)"));
    }
    try (CodeStream s = Encoders.model(none, Golden.path("sklearn/inputs.npy"), EncodeOptions.positive())) {
      assertThat(s.notes()).noneSatisfy(n -> assertThat(n).contains(".bias"));
    }
  }

  @Test
  void theFixItNamesGivesScikitLearnsCodes() throws IOException {
    // the untransposed file's own tensors, transposed as the message says, are mlp.safetensors
    try (var bad = io.actindex.encode.io.SafetensorsReader.open(Golden.path("sklearn/untransposed.safetensors"));
        var good = io.actindex.encode.io.SafetensorsReader.open(Golden.path("sklearn/mlp.safetensors"))) {
      for (String layer : new String[] {"0", "1", "2"}) {
        long[] s = bad.entry(layer + ".weight").shape();
        double[] w = bad.read(layer + ".weight"), t = good.read(layer + ".weight");
        int in = (int) s[0], out = (int) s[1];
        for (int i = 0; i < in; i++)
          for (int o = 0; o < out; o++) assertThat(t[o * in + i]).isEqualTo(w[i * out + o]);
      }
    }
  }
}
