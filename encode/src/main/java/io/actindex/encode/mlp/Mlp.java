package io.actindex.encode.mlp;

import io.actindex.encode.io.SafetensorsReader;
import io.actindex.encode.io.SafetensorsWriter;
import io.actindex.core.BadInputException;
import java.io.IOException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Collection;
import java.util.Comparator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.CommonOps_DDRM;

/**
 * A multi-layer perceptron of linear layers with ReLU between them (none after the last): {@code
 * h_1 = relu(x W_1^T + b_1)}, ..., {@code out = h_{L-1} W_L^T + b_L}. Stored as safetensors with
 * PyTorch naming: {@code NAME.weight} of shape {@code [out, in]} and optional {@code NAME.bias} of
 * shape {@code [out]}. The hidden layers are all layers but the last; their names become the
 * code segments. Immutable; thread-safe.
 *
 * <p>Default layer order (when none is given): by the integers embedded in the names, compared
 * as sequences ({@code "0" < "2" < "10"}, {@code "fc1" < "fc2" < "fc10"}, {@code "net.0" <
 * "net.2"}), then by name. The order must chain: each layer's input width is the previous
 * layer's output width.
 */
public final class Mlp {
  /** One linear layer: {@code weight} is {@code out x in}. */
  public record Layer(String name, DMatrixRMaj weight, double[] bias) {
    public Layer {
      if (bias.length != weight.numRows)
        throw new IllegalArgumentException("layer " + name + ": bias has " + bias.length + " values, weight has " + weight.numRows + " rows");
    }

    public int in() {
      return weight.numCols;
    }

    public int out() {
      return weight.numRows;
    }
  }

  private final List<Layer> layers;

  public Mlp(List<Layer> layers) {
    if (layers.isEmpty()) throw new IllegalArgumentException("an MLP needs at least one layer");
    for (int i = 1; i < layers.size(); i++)
      if (layers.get(i).in() != layers.get(i - 1).out())
        throw new IllegalArgumentException("layer '" + layers.get(i).name() + "' takes " + layers.get(i).in() + " inputs but layer '"
            + layers.get(i - 1).name() + "' gives " + layers.get(i - 1).out());
    this.layers = List.copyOf(layers);
  }

  private static final Pattern DIGITS = Pattern.compile("\\d+");

  /** Sorts layer names by their embedded integers, then by name (the documented default order). */
  public static List<String> defaultOrder(Collection<String> names) {
    List<String> out = new ArrayList<>(names);
    out.sort(Comparator.comparing(Mlp::numbers, Mlp::compareNumbers).thenComparing(Comparator.naturalOrder()));
    return out;
  }

  private static List<Long> numbers(String s) {
    List<Long> l = new ArrayList<>();
    Matcher m = DIGITS.matcher(s);
    while (m.find()) l.add(m.group().length() > 18 ? Long.MAX_VALUE : Long.parseLong(m.group()));
    return l;
  }

  private static int compareNumbers(List<Long> a, List<Long> b) {
    for (int i = 0; i < Math.min(a.size(), b.size()); i++) {
      int c = Long.compare(a.get(i), b.get(i));
      if (c != 0) return c;
    }
    return Integer.compare(a.size(), b.size());
  }

  /**
   * Loads an MLP from safetensors. {@code order} lists the layer names (without {@code .weight})
   * in forward order; null = every {@code *.weight} tensor in the default order.
   */
  public static Mlp load(Path file, List<String> order) throws IOException {
    try (SafetensorsReader r = SafetensorsReader.open(file)) {
      List<String> names = new ArrayList<>();
      for (String t : r.entries().keySet()) if (t.endsWith(".weight")) names.add(t.substring(0, t.length() - 7));
      if (names.isEmpty()) throw new BadInputException(file + ": no tensor named NAME.weight; an MLP needs PyTorch-style names");
      boolean given = order != null;
      if (order == null) order = defaultOrder(names);
      List<Layer> layers = new ArrayList<>();
      for (String name : order) {
        var w = r.entry(name + ".weight");
        if (w.shape().length != 2)
          throw new BadInputException(file + ": tensor '" + name + ".weight': field shape " + w.shapeString() + " is not [out, in]");
        int out = Math.toIntExact(w.shape()[0]), in = Math.toIntExact(w.shape()[1]);
        DMatrixRMaj weight = DMatrixRMaj.wrap(out, in, r.read(name + ".weight"));
        double[] bias = new double[out];
        if (r.entries().containsKey(name + ".bias")) {
          var b = r.entry(name + ".bias");
          if (b.shape().length != 1 || b.shape()[0] != out)
            throw new BadInputException(file + ": tensor '" + name + ".bias': field shape " + b.shapeString() + " does not match [" + out + "]");
          bias = r.read(name + ".bias");
        }
        if (!layers.isEmpty() && layers.getLast().out() != in)
          throw new BadInputException(file + ": tensor '" + name + ".weight': field shape " + w.shapeString() + " takes " + in
              + " inputs but layer '" + layers.getLast().name() + "' gives " + layers.getLast().out()
              + (given ? "" : " (default order " + order + "; give the layer order explicitly)"));
        layers.add(new Layer(name, weight, bias));
      }
      return new Mlp(layers);
    }
  }

  /** Saves as safetensors (F32, PyTorch naming); {@code metadata} goes to {@code __metadata__}. */
  public void save(Path file, Map<String, String> metadata) throws IOException {
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    for (Layer l : layers) {
      t.put(l.name() + ".weight", new SafetensorsWriter.Tensor(new long[] {l.out(), l.in()}, l.weight().data.clone()));
      t.put(l.name() + ".bias", new SafetensorsWriter.Tensor(new long[] {l.out()}, l.bias().clone()));
    }
    SafetensorsWriter.write(file, t, metadata);
  }

  public List<Layer> layers() {
    return layers;
  }

  /** Input width. */
  public int inputs() {
    return layers.getFirst().in();
  }

  /** Output width (e.g. classes). */
  public int outputs() {
    return layers.getLast().out();
  }

  /** Names of the hidden layers (all but the last), in order. */
  public List<String> hiddenNames() {
    return layers.subList(0, layers.size() - 1).stream().map(Layer::name).toList();
  }

  /**
   * Batched forward pass of the rows of {@code x} ({@code m x inputs}) with EJML matrix products.
   * Returns every layer's output: hidden layers after ReLU, the last before any activation.
   */
  public DMatrixRMaj[] forward(DMatrixRMaj x) {
    if (x.numCols != inputs()) throw new IllegalArgumentException("input has " + x.numCols + " columns, the model takes " + inputs());
    DMatrixRMaj[] out = new DMatrixRMaj[layers.size()];
    DMatrixRMaj h = x;
    for (int l = 0; l < layers.size(); l++) {
      Layer layer = layers.get(l);
      DMatrixRMaj z = new DMatrixRMaj(h.numRows, layer.out());
      CommonOps_DDRM.multTransB(h, layer.weight(), z);
      double[] zd = z.data, b = layer.bias();
      int o = layer.out();
      boolean relu = l < layers.size() - 1;
      for (int i = 0, n = h.numRows * o; i < n; i++) {
        double v = zd[i] + b[i % o];
        zd[i] = relu && !(v > 0) ? 0 : v;
      }
      out[l] = z;
      h = z;
    }
    return out;
  }

  /** Most likely class (argmax of the last layer) of each row. */
  public int[] predict(DMatrixRMaj x) {
    DMatrixRMaj logits = forward(x)[layers.size() - 1];
    int[] y = new int[x.numRows];
    for (int i = 0; i < x.numRows; i++) {
      int best = 0;
      for (int c = 1; c < logits.numCols; c++) if (logits.get(i, c) > logits.get(i, best)) best = c;
      y[i] = best;
    }
    return y;
  }
}
