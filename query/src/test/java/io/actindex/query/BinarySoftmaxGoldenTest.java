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
    // the same rows as a CSV under a header of numbered columns, which only --header yes reads (the
    // baseline reopened the file under auto, refusing it while the codes were read as told)
    double[] x;
    int cols;
    try (NpyReader r = NpyReader.open(inputs)) {
      cols = r.cols();
      x = new double[(int) r.rows() * cols];
      r.read(x, (int) r.rows());
    }
    StringBuilder csv = new StringBuilder();
    for (int c = 0; c < cols; c++) csv.append(c == 0 ? "" : ",").append(c + 1);
    for (int i = 0; i < x.length; i++) csv.append(i % cols == 0 ? "\n" : ",").append(x[i]);
    Path numbered = java.nio.file.Files.writeString(tmp.resolve("numbered.csv"), csv.append('\n'));
    try (IndexReader reader = IndexReader.open(dir)) {
      for (Source s : new Source[] {Source.inputs(inputs, null),
          new Source(Source.Kind.INPUTS, numbered, null, io.actindex.encode.io.CsvMatrixReader.Header.YES)}) {
        double[] got = SoftmaxBaseline.scores(reader, s, RowRange.ALL);
        assertThat(got).hasSize(expected.length);
        for (int i = 0; i < got.length; i++) assertThat(got[i]).as(s.file() + " row " + i).isCloseTo(expected[i], within(1e-9));
      }
    }
    assertThat(Arrays.stream(expected).distinct().count()).as("the reference tells rows apart").isGreaterThan(expected.length / 2);
  }
}
