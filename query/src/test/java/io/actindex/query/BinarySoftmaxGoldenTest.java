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

  /**
   * A one-output model's output is read as a logit, which only a classifier's is: nothing in the
   * file tells a regressor apart, so ood eval's description and ood score's note say how it is read.
   */
  @Test
  void aOneOutputModelIsSaidToBeReadAsATwoClassLogit() throws Exception {
    Path inputs = golden("inputs.npy");
    int cols;
    try (NpyReader r = NpyReader.open(inputs)) {
      cols = r.cols();
    }
    java.util.SplittableRandom rnd = new java.util.SplittableRandom(5);
    double[] w0 = new double[4 * cols], w1 = new double[2 * 4];
    for (int i = 0; i < w0.length; i++) w0[i] = rnd.nextDouble(-1, 1);
    for (int i = 0; i < w1.length; i++) w1[i] = rnd.nextDouble(-1, 1);
    java.util.Map<String, io.actindex.encode.io.SafetensorsWriter.Tensor> t = new java.util.LinkedHashMap<>();
    t.put("0.weight", new io.actindex.encode.io.SafetensorsWriter.Tensor(new long[] {4, cols}, w0));
    t.put("2.weight", new io.actindex.encode.io.SafetensorsWriter.Tensor(new long[] {2, 4}, w1));
    Path twoOutputs = tmp.resolve("two.safetensors");
    io.actindex.encode.io.SafetensorsWriter.write(twoOutputs, t, java.util.Map.of());
    for (Path model : new Path[] {golden("model.safetensors"), twoOutputs}) {
      Path dir = tmp.resolve("idx-" + model.getFileName());
      IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.inputs(inputs, model), null), null);
      OodCalibrate.run(dir, Source.inputs(inputs, null), RowRange.ALL, new OodCalibrate.Params(1, null, 0.9, null, false), Progress.NONE);
      try (IndexReader reader = IndexReader.open(dir)) {
        OodEval.Result e = OodEval.run(reader, new OodEval.Params(Source.inputs(inputs, null), Source.inputs(inputs, null), null, null, null),
            Progress.NONE);
        String note = SoftmaxBaseline.oneOutputNote(reader);
        if (model == twoOutputs) {
          assertThat(note).isNull();
          assertThat(e.softmax().description()).doesNotContain("regressor");
        } else {
          assertThat(note).contains("one output").contains("regressor");
          assertThat(e.softmax().description()).contains(note);
        }
      }
    }
  }
}
