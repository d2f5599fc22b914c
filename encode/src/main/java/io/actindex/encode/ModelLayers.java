package io.actindex.encode;

import io.actindex.encode.io.MatrixReader;
import io.actindex.encode.mlp.Mlp;
import io.actindex.core.BadInputException;
import java.io.IOException;
import java.util.Arrays;
import java.util.List;
import org.ejml.data.DMatrixRMaj;

/** The hidden-layer activations of an {@link Mlp} run on the rows of an input matrix. */
final class ModelLayers implements LayerSource {
  private final Mlp mlp;
  private final MatrixReader in;
  private final List<String> names;
  private final int[] layerIndex;
  private final String modelNote;
  private final String modelName;
  private double[] buf = new double[0];

  /** {@code modelNote}: a line saying how the model's layers were read (may be null). */
  ModelLayers(Mlp mlp, String modelName, MatrixReader in, List<String> selected, String modelNote) {
    this.mlp = mlp;
    this.in = in;
    this.modelNote = modelNote;
    this.modelName = modelName;
    List<String> hidden = mlp.hiddenNames();
    if (hidden.isEmpty())
      throw new BadInputException(modelName + ": the model has one layer and no hidden layer to encode (a file of hidden layers only: `outputLayer false`)");
    if (in.cols() != mlp.inputs())
      throw new BadInputException(in.source() + ": rows have " + in.cols() + (in.cols() == 1 ? " value" : " values") + " but the model " + modelName + " (layer '"
          + mlp.layers().getFirst().name() + "', weight shape [" + mlp.layers().getFirst().out() + ", " + mlp.inputs() + "]) takes " + mlp.inputs()
          + in.notes().stream().filter(n -> n.contains("hint:")).map(n -> "; " + n.substring(n.indexOf("hint:"))).findFirst().orElse("")
          + (in.rows() == mlp.inputs() ? "; the file has " + in.rows() + " rows: saved as features by examples? save it transposed (a.T)" : "")
          + (in.cols() == hiddenUnits(mlp, selected) ? "; " + in.cols() + " is the number of the model's hidden units in the code layers: if these rows"
              + " are its hidden activations, pass them with `Source.activations`" : "")
          + (in.cols() == mlp.inputs() + 1 ? "; one column too many: is one of them the label (scikit-learn's data frames end with 'target')"
              + " or a row index?" + (in.columnNames() == null ? "" : " (first column " + BadInputException.quote(in.columnNames().getFirst())
                  + ", last " + BadInputException.quote(in.columnNames().getLast()) + ")") : ""));
    if (selected == null) {
      names = hidden;
    } else {
      for (String s : selected)
        if (!hidden.contains(s))
          throw new BadInputException(modelName + ": no hidden layer named " + BadInputException.quote(s) + " (hidden layers: " + hidden + ")"
              + (s.equals(mlp.layers().getLast().name()) && !hidden.contains(s)
                  ? "; " + BadInputException.quote(s) + " is the output layer, which is not encoded (`outputLayer false` makes every layer a code layer)" : ""));
      names = hidden.stream().filter(selected::contains).toList();
    }
    layerIndex = names.stream().mapToInt(hidden::indexOf).toArray();
  }

  /** The units of the hidden layers {@code selected} (null: every hidden layer; a name of no hidden layer counts nothing). */
  private static int hiddenUnits(Mlp mlp, List<String> selected) {
    int units = 0;
    for (Mlp.Layer l : mlp.layers())
      if (mlp.hiddenNames().contains(l.name()) && (selected == null || selected.contains(l.name()))) units += l.out();
    return units;
  }

  /** The model: messages about layers concern it (rows are the reader's, which names the inputs). */
  @Override
  public String source() {
    return modelName;
  }

  /** The inputs file: a row of activations is the model run on its row. */
  @Override
  public String rowSource() {
    return in.source();
  }

  @Override
  public List<String> names() {
    return names;
  }

  @Override
  public List<String> notes() {
    List<String> n = new java.util.ArrayList<>(in.notes());
    if (modelNote != null) n.add(modelNote);
    return n;
  }

  /** The names of the input columns (a CSV header), not of the hidden units. */
  @Override
  public List<String> columnNames() {
    return in.columnNames();
  }

  @Override
  public int[] widths() {
    return Arrays.stream(layerIndex).map(i -> mlp.layers().get(i).out()).toArray();
  }

  @Override
  public long rows() {
    return in.rows();
  }

  @Override
  public boolean floats(int layer) {
    return false;
  }

  @Override
  public int read(int m, float[][] f, double[][] d) throws IOException {
    if (buf.length < m * in.cols()) buf = new double[m * in.cols()];
    int n = in.read(buf, m);
    if (n == 0) return 0;
    DMatrixRMaj x = new DMatrixRMaj(n, in.cols());
    System.arraycopy(buf, 0, x.data, 0, n * in.cols());
    DMatrixRMaj[] out = mlp.forward(x);
    checkFinite(out, in.position() - n);
    for (int i = 0; i < layerIndex.length; i++) d[i] = out[layerIndex[i]].data;
    return n;
  }

  /** Refuses rows whose hidden activations overflow (a NaN or infinity would otherwise pass as a code bit). */
  private void checkFinite(DMatrixRMaj[] out, long firstRow) {
    for (int l = 0; l < mlp.hiddenNames().size(); l++) {
      double[] v = out[l].data;
      int w = out[l].numCols;
      for (int i = 0; i < out[l].getNumElements(); i++)
        if (!Double.isFinite(v[i]))
          throw new BadInputException(in.source() + ": row " + (firstRow + i / w) + " (0-based): layer "
              + BadInputException.quote(mlp.layers().get(l).name()) + ", unit " + (i % w) + " of the model " + modelName
              + " overflows (" + v[i] + "); the inputs are too large for the weights");
    }
  }

  @Override
  public void close() throws IOException {
    in.close();
  }
}
