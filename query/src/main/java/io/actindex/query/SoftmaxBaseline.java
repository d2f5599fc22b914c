package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.edge.EdgeBundle;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.encode.io.SafetensorsReader;
import io.actindex.encode.io.MatrixReader;
import io.actindex.encode.mlp.Mlp;
import io.actindex.index.store.IndexReader;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Path;
import java.util.Arrays;
import org.ejml.data.DMatrixRMaj;

/**
 * The maximum softmax probability of the index's stored model on raw inputs (Hendrycks &amp;
 * Gimpel, "A Baseline for Detecting Misclassified and Out-of-Distribution Examples in Neural
 * Networks", ICLR 2017): the baseline reported beside the code score, never mixed into it. As an
 * OOD score it is {@code 1 - MSP} (higher = more out).
 */
public final class SoftmaxBaseline {
  private SoftmaxBaseline() {}

  /**
   * The index's stored model in the layer order and with the output layer the build used, or null
   * when it has none.
   */
  public static Mlp model(IndexReader reader) {
    byte[] stored = reader.attachment(BuildInfo.MODEL);
    if (stored == null) return null;
    EncodeOptions o = BuildInfo.fromProperties(reader.properties(), reader.dir().toString()).encode();
    try (SafetensorsReader r = SafetensorsReader.open(reader.dir().resolve(BuildInfo.MODEL) + " (the model stored in the index)", stored)) {
      return Mlp.load(r, o.layerOrder(), o.outputLayer(), -1).mlp();
    } catch (IOException e) {
      throw new UncheckedIOException(reader.dir() + ": cannot read the stored model: " + e.getMessage(), e);
    }
  }

  /**
   * For a stored model of one output: a note that the baseline reads that output as a two-class
   * logit ({@link EdgeBundle#maxSoftmaxOf}), which a regressor's output is not (nothing in the file
   * tells the two apart); null for any other model, or none.
   */
  public static String oneOutputNote(IndexReader reader) {
    Mlp mlp = model(reader);
    if (mlp == null || mlp.outputLayer() == null || mlp.outputs() != 1) return null;
    return "the model has one output, taken as a two-class logit z (probabilities 1 / (1 + e^-z) and its complement); a regressor's"
        + " output is no logit, and the softmax baseline then means nothing";
  }

  /**
   * {@code 1 - MSP} for the rows of {@code source} when it is raw inputs and the index holds a
   * model with an output layer; null otherwise (the baseline does not apply).
   */
  public static double[] scores(IndexReader reader, Source source, RowRange rows) {
    if (source.kind() != Source.Kind.INPUTS) return null;
    Mlp mlp = source.model() != null ? load(source.model()) : model(reader);
    if (mlp == null || mlp.outputLayer() == null) return null;
    RowRange range = rows == null ? RowRange.ALL : rows;
    try (MatrixReader in = Encoders.openMatrix(source.file(), source.header())) { // the header choice the codes were read with
      if (in.cols() != mlp.inputs())
        throw new BadInputException(source.file() + ": rows have " + in.cols() + " values, the model takes " + mlp.inputs());
      double[] out = new double[64];
      int kept = 0;
      long row = 0;
      double[] buf = new double[4096 * in.cols()];
      int m;
      while ((m = in.read(buf, 4096)) > 0) {
        DMatrixRMaj x = new DMatrixRMaj(m, in.cols());
        System.arraycopy(buf, 0, x.data, 0, m * in.cols());
        DMatrixRMaj logits = mlp.forward(x)[mlp.layers().size() - 1];
        for (int i = 0; i < m; i++, row++) {
          if (!range.contains(row)) continue;
          if (kept == out.length) out = Arrays.copyOf(out, kept * 2);
          out[kept++] = 1 - EdgeBundle.maxSoftmaxOf(Arrays.copyOfRange(logits.data, i * logits.numCols, (i + 1) * logits.numCols));
        }
      }
      return Arrays.copyOf(out, kept);
    } catch (IOException e) {
      throw new UncheckedIOException(source.file() + ": " + e.getMessage(), e);
    }
  }

  private static Mlp load(Path file) {
    try {
      return Mlp.load(file, null);
    } catch (IOException e) {
      throw new UncheckedIOException(file + ": " + e.getMessage(), e);
    }
  }
}
