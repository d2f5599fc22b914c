package io.actindex.encode.mlp;

import io.actindex.encode.io.SafetensorsReader;
import io.actindex.encode.io.SafetensorsWriter;
import io.actindex.core.BadInputException;
import java.io.IOException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.CommonOps_DDRM;

/**
 * A multi-layer perceptron of linear layers with ReLU between them: {@code h_1 = relu(x W_1^T +
 * b_1)}, ..., {@code out = h_{L-1} W_L^T + b_L}. Stored as safetensors with PyTorch naming:
 * {@code NAME.weight} of shape {@code [out, in]} and optional {@code NAME.bias} of shape {@code
 * [out]}. By default the last layer is the output layer (no ReLU, not a code layer) and the others
 * are the code layers; a model without an output layer (a trunk of hidden layers) has ReLU after
 * every layer and all of them are code layers. Immutable; thread-safe.
 *
 * <p>The file does not record the forward order; {@link LayerOrder} decides it (given order, the
 * numbers in the names, or the shapes) and refuses when it cannot.
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

  /** A model read from a file, and where its layer order came from. */
  public record Loaded(Mlp mlp, LayerOrder.From orderFrom, List<String> withoutBias) {}

  private final List<Layer> layers;
  private final boolean outputLayer;

  /** Layers in forward order; the last is the output layer. */
  public Mlp(List<Layer> layers) {
    this(layers, true);
  }

  /** Layers in forward order; {@code outputLayer}: the last is an output layer (else a hidden one). */
  public Mlp(List<Layer> layers, boolean outputLayer) {
    if (layers.isEmpty()) throw new IllegalArgumentException("an MLP needs at least one layer");
    for (int i = 1; i < layers.size(); i++)
      if (layers.get(i).in() != layers.get(i - 1).out())
        throw new IllegalArgumentException("layer '" + layers.get(i).name() + "' takes " + layers.get(i).in() + " inputs but layer '"
            + layers.get(i - 1).name() + "' gives " + layers.get(i - 1).out());
    this.layers = List.copyOf(layers);
    this.outputLayer = outputLayer;
  }

  /**
   * Loads an MLP from safetensors. {@code order} lists the layer names (without {@code .weight})
   * in forward order; null = decide by {@link LayerOrder}. The last layer is the output layer.
   */
  public static Mlp load(Path file, List<String> order) throws IOException {
    try (SafetensorsReader r = SafetensorsReader.open(file)) {
      return load(r, order, true, -1).mlp();
    }
  }

  /** What a file holding anything else is told. */
  private static final String PLAIN = "actindex runs a plain stack of linear layers with ReLU between them and would compute other codes"
      + " than your model: fold such layers into the linear ones (as for inference), or give the activations (`Source.activations`)";

  /**
   * The linear layers a file declares ({@code NAME.weight} of shape {@code [out, in]}), in file
   * order. Any other tensor (a normalization layer's scale or running statistics, an embedding, a
   * buffer) is refused: ignoring it would run another network than the file's, with no error.
   */
  public static List<LayerOrder.Shape> shapes(SafetensorsReader r) {
    String split = r.entries().keySet().stream().filter(n -> n.contains(".parametrizations.") || n.endsWith(".weight_g") || n.endsWith(".weight_v"))
        .findFirst().orElse(null);
    if (split != null) // weight_norm and the like: the weight is a function of these tensors
      throw new BadInputException(r.file() + ": tensor " + BadInputException.quote(split) + " is part of a parametrized weight (weight_norm,"
          + " spectral_norm): remove the parametrization before saving (torch.nn.utils.parametrize.remove_parametrizations, or"
          + " torch.nn.utils.remove_weight_norm), so that each layer has its NAME.weight");
    List<LayerOrder.Shape> shapes = new ArrayList<>();
    for (var e : r.entries().values()) {
      if (!e.name().endsWith(".weight")) continue;
      String name = e.name().substring(0, e.name().length() - 7);
      if (e.shape().length != 2)
        throw new BadInputException(r.file() + ": tensor " + BadInputException.quote(e.name()) + ": field shape " + e.shapeString() + " is not [out, in]"
            + (e.shape().length == 1 ? " (a normalization layer's scale?); " + PLAIN : ""));
      if (e.shape()[0] == 0 || e.shape()[1] == 0 || e.shape()[0] > Integer.MAX_VALUE || e.shape()[1] > Integer.MAX_VALUE)
        throw new BadInputException(r.file() + ": tensor " + BadInputException.quote(e.name()) + ": field shape " + e.shapeString() + " is empty or too large");
      shapes.add(new LayerOrder.Shape(name, e.shape()[0], e.shape()[1]));
    }
    if (shapes.isEmpty()) {
      String kernel = r.entries().keySet().stream().filter(n -> n.matches("(?s).*kernel(:\\d+)?")).findFirst().orElse(null);
      throw new BadInputException(r.file() + ": no tensor named NAME.weight; an MLP needs PyTorch-style names" + (kernel == null ? ""
          : " (" + BadInputException.quote(kernel) + " is a dense kernel as Keras and JAX/Flax store it, [in, out]: save each kernel transposed"
              + " as NAME.weight, [out, in] like PyTorch's nn.Linear, and its bias as NAME.bias)"));
    }
    List<String> other = new ArrayList<>();
    for (String name : r.entries().keySet()) {
      if (name.endsWith(".bias") && !r.entries().containsKey(name.substring(0, name.length() - 5) + ".weight"))
        throw new BadInputException(r.file() + ": tensor " + BadInputException.quote(name) + " has no "
            + BadInputException.quote(name.substring(0, name.length() - 5) + ".weight") + " (a layer without its weight: is the file complete?)");
      if (!name.endsWith(".weight") && !name.endsWith(".bias")) other.add(BadInputException.quote(name));
    }
    if (!other.isEmpty())
      throw new BadInputException(r.file() + ": " + (other.size() == 1 ? "tensor " : other.size() + " tensors ")
          + String.join(", ", other.subList(0, Math.min(5, other.size()))) + (other.size() > 5 ? ", ..." : "")
          + (other.size() == 1 ? " is" : " are") + " not the weight or bias of a linear layer" + (other.stream().anyMatch(n -> n.contains("running_"))
              ? " (a normalization layer's running statistics?)" : "") + "; " + PLAIN);
    return shapes;
  }

  /**
   * Loads an MLP from an open reader: the order is {@code order} (checked) or decided by {@link
   * LayerOrder#resolve} with {@code inputWidth} (-1 = unknown); {@code outputLayer} says whether
   * the last layer is an output layer.
   */
  public static Loaded load(SafetensorsReader r, List<String> order, boolean outputLayer, long inputWidth) throws IOException {
    String file = r.file();
    LayerOrder.Resolved resolved = LayerOrder.resolve(file, shapes(r), order, inputWidth);
    List<Layer> layers = new ArrayList<>();
    List<String> withoutBias = new ArrayList<>();
    for (String name : resolved.order()) {
      var w = r.entry(name + ".weight");
      int out = Math.toIntExact(w.shape()[0]), in = Math.toIntExact(w.shape()[1]);
      DMatrixRMaj weight = DMatrixRMaj.wrap(out, in, r.read(name + ".weight"));
      double[] bias = new double[out];
      if (r.entries().containsKey(name + ".bias")) {
        var b = r.entry(name + ".bias");
        if (b.shape().length != 1 || b.shape()[0] != out)
          throw new BadInputException(file + ": tensor " + BadInputException.quote(name + ".bias") + ": field shape " + b.shapeString() + " does not match ["
              + out + "]" + (b.shape().length == 1 && b.shape()[0] == in ? "; it matches the weight's second dimension: is the weight [" + out + ", " + in
                  + "] stored as [in, out] (scikit-learn's coefs_, a Keras or JAX/Flax kernel)? save it transposed, as [out, in]: np.ascontiguousarray(W.T)" : ""));
        bias = r.read(name + ".bias");
      } else {
        withoutBias.add(name);
      }
      layers.add(new Layer(name, weight, bias));
    }
    // a bias missing beside others is more often left out when saving than a layer built without one
    return new Loaded(new Mlp(layers, outputLayer), resolved.from(), withoutBias.size() == layers.size() ? List.of() : List.copyOf(withoutBias));
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

  /** Names of the hidden layers, the code layers (all but the output layer), in order. */
  public List<String> hiddenNames() {
    return layers.subList(0, outputLayer ? layers.size() - 1 : layers.size()).stream().map(Layer::name).toList();
  }

  /** Name of the output layer (the last), or null for a model of hidden layers only. */
  public String outputLayer() {
    return outputLayer ? layers.getLast().name() : null;
  }

  /**
   * Batched forward pass of the rows of {@code x} ({@code m x inputs}) with EJML matrix products.
   * Returns every layer's output: hidden layers after ReLU, the output layer before any activation.
   * A pre-activation that overflows stays infinite or NaN (ReLU takes only -infinity to 0).
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
      boolean relu = l < layers.size() - 1 || !outputLayer;
      for (int i = 0, n = h.numRows * o; i < n; i++) {
        double v = zd[i] + b[i % o];
        zd[i] = relu && v <= 0 ? 0 : v; // NaN passes, so a caller can see an overflow
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
