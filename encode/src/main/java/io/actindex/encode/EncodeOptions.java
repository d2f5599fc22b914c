package io.actindex.encode;

import io.actindex.core.BadParameterException;
import io.actindex.core.Names;
import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * How to turn activations into codes.
 *
 * @param rule the binarization rule
 * @param threshold {@code t} for {@link BinarizeRule#THRESHOLD} (ignored otherwise)
 * @param layers which layers to encode, in order; null = all (names in Unicode NFC, {@link Names}, as every name here). For an {@code .npz} file the member
 *     names; for a model the hidden layer names (kept in model order); for a single {@code .npy}
 *     or CSV file one name, the segment name (default {@code "act"})
 * @param medians per-layer, per-neuron medians for {@link BinarizeRule#MEDIAN}; null = compute
 *     them from the data on a first pass (build). Queries pass the build's medians (see {@link
 *     Encoders#fromProperties}) so they are encoded the same way
 * @param layerOrder a model's layers in forward order (every layer, output layer included); null
 *     = decide from the names and shapes ({@link io.actindex.encode.mlp.LayerOrder}). A model
 *     stream's {@link CodeStream#options()} carries the order it used, so that it is stored
 * @param outputLayer whether a model's last layer is its output layer (not encoded); false for a
 *     file of hidden layers only, where every layer is a code layer
 */
public record EncodeOptions(BinarizeRule rule, double threshold, List<String> layers, Map<String, double[]> medians,
    List<String> layerOrder, boolean outputLayer) {

  public EncodeOptions {
    if (rule == null) throw new IllegalArgumentException("binarization rule is null");
    if (!Double.isFinite(threshold)) throw new BadParameterException("threshold", " must be a finite number, got " + threshold);
    layers = layers == null ? null : layers.stream().map(Names::nfc).toList(); // names in one Unicode form, as the readers give them
    if (medians != null) {
      Map<String, double[]> m = new LinkedHashMap<>();
      medians.forEach((layer, v) -> m.put(Names.nfc(layer), v));
      medians = Collections.unmodifiableMap(m);
    }
    layerOrder = layerOrder == null ? null : layerOrder.stream().map(Names::nfc).toList();
  }

  public EncodeOptions(BinarizeRule rule, double threshold, List<String> layers, Map<String, double[]> medians) {
    this(rule, threshold, layers, medians, null, true);
  }

  public EncodeOptions(BinarizeRule rule, double threshold, List<String> layers) {
    this(rule, threshold, layers, null);
  }

  /** {@code v > 0} on every layer: the default for ReLU activations. */
  public static EncodeOptions positive() {
    return new EncodeOptions(BinarizeRule.POSITIVE, 0, null);
  }

  /** These options with the given medians. */
  public EncodeOptions withMedians(Map<String, double[]> m) {
    return new EncodeOptions(rule, threshold, layers, m, layerOrder, outputLayer);
  }

  /** These options restricted to the given layers. */
  public EncodeOptions withLayers(List<String> l) {
    return new EncodeOptions(rule, threshold, l, medians, layerOrder, outputLayer);
  }

  /** These options with a model's layer order and output-layer choice. */
  public EncodeOptions withModel(List<String> order, boolean output) {
    return new EncodeOptions(rule, threshold, layers, medians, order, output);
  }
}
