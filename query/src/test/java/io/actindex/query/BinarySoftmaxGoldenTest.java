package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import io.actindex.encode.io.NpyReader;
import io.actindex.index.store.IndexReader;
import java.nio.file.Path;
import java.util.Arrays;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The softmax baseline of a two-class model with one output unit. scikit-learn's MLPClassifier on
 * two classes has one logistic output unit ({@code out_activation_ = "logistic"}, {@code
 * predict_proba = [1 - s, s]}); softmax over that one logit is 1 for every input, so the baseline
 * scored every input 0 and reported AUROC 0.5 as if the model knew nothing. Reference:
 * scikit-learn 1.9.1 {@code predict_proba} on standardized breast cancer rows
 * ({@code tools/golden/make_sklearn_mlp.py}, outputs in {@code golden/sklearn_binary/}).
 */
class BinarySoftmaxGoldenTest {
  @TempDir Path tmp;

  private static Path golden(String name) throws Exception {
    var url = BinarySoftmaxGoldenTest.class.getResource("/golden/sklearn_binary/" + name);
    if (url == null) throw new IllegalStateException("missing golden file " + name);
    return Path.of(url.toURI());
  }

  @Test
  void oneMinusMaxProbabilityEqualsScikitLearnsPredictProba() throws Exception {
    Path dir = tmp.resolve("idx"), inputs = golden("inputs.npy");
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.inputs(inputs, golden("model.safetensors")), null), null);
    double[] expected;
    try (NpyReader r = NpyReader.open(golden("one_minus_msp.npy"))) {
      expected = new double[(int) r.rows()];
      r.read(expected, expected.length);
    }
    try (IndexReader reader = IndexReader.open(dir)) {
      double[] got = SoftmaxBaseline.scores(reader, Source.inputs(inputs, null), RowRange.ALL);
      assertThat(got).hasSize(expected.length);
      for (int i = 0; i < got.length; i++) assertThat(got[i]).as("row " + i).isCloseTo(expected[i], within(1e-9));
    }
    assertThat(Arrays.stream(expected).distinct().count()).as("the reference tells rows apart").isGreaterThan(expected.length / 2);
  }
}
