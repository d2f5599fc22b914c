package io.actindex.encode.mlp;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.encode.CodeStream;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import io.actindex.core.ScanSearcher;
import java.io.IOException;
import java.nio.file.Path;
import org.ejml.data.DMatrixRMaj;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * An open dataset end to end: UCI "Optical Recognition of Handwritten Digits" (Alpaydin & Kaynak,
 * 1998; CC BY 4.0), the 1,797-sample copy scikit-learn ships (test resources digits/, see
 * SOURCE.md). A fixed 75/25 split; the trainer's MLP (64-64-32-10) must reach 95% held-out
 * accuracy (a floor that is common for a small MLP on this set — from memory). All samples are
 * then encoded through the file path (safetensors model + .npy inputs), and 1-nearest-neighbour
 * classification of the held-out codes by Hamming distance to the training codes must reach the
 * floor below, set from measurement with a margin. Measured with this split and seed: 96.2% held-out
 * accuracy, 91.1% Hamming 1-NN accuracy.
 */
@Tag("slow")
class DigitsTest {
  @TempDir Path tmp;

  static final double ACCURACY_FLOOR = 0.95; // from memory (see class comment)
  static final double HAMMING_1NN_FLOOR = 0.88; // measured 0.911 (410/450), minus a margin of about 13 samples

  @Test
  void trainedMlpCodesClassifyByHammingNearestNeighbour() throws IOException {
    Digits digits = Digits.load();
    double[][] x = digits.x;
    int[] y = digits.y;
    int n = x.length, nTrain = digits.nTrain;
    assertThat(n).isEqualTo(1797);
    Mlp mlp = digits.train();

    int[] pred = mlp.predict(new DMatrixRMaj(java.util.Arrays.copyOfRange(x, nTrain, n)));
    int correct = 0;
    for (int i = 0; i < pred.length; i++) if (pred[i] == y[nTrain + i]) correct++;
    double accuracy = correct / (double) pred.length;

    // encode every sample through files: the model as safetensors, the inputs as float32 .npy
    Path model = tmp.resolve("digits.safetensors"), inputs = tmp.resolve("digits.npy");
    mlp.save(model, null);
    try (NpyWriter w = NpyWriter.create(inputs, NpyDtype.FLOAT32, 64)) {
      for (double[] r : x) w.write(r, 1);
      w.commit();
    }
    CodeBlock codes;
    String stats;
    try (CodeStream s = Encoders.model(model, inputs, EncodeOptions.positive())) {
      assertThat(s.layout().toString()).isEqualTo("0:64,2:32");
      codes = Encoders.readAll(s);
      stats = s.stats().summary();
    }
    ScanSearcher train = new ScanSearcher(codes.slice(0, nTrain));
    int nnCorrect = 0;
    for (int i = nTrain; i < n; i++) {
      Hits h = train.knn(codes.code(i), 1);
      if (y[h.ord(0)] == y[i]) nnCorrect++;
    }
    double nnAccuracy = nnCorrect / (double) (n - nTrain);
    System.out.printf("digits: held-out accuracy %.4f, Hamming 1-NN accuracy %.4f (%d test samples)%n%s", accuracy, nnAccuracy, n - nTrain, stats);
    assertThat(accuracy).as("held-out accuracy").isGreaterThanOrEqualTo(ACCURACY_FLOOR);
    assertThat(nnAccuracy).as("Hamming 1-NN accuracy on codes").isGreaterThanOrEqualTo(HAMMING_1NN_FLOOR);
  }
}
