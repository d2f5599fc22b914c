package io.actindex.query;

import io.actindex.core.CodeLayout;
import io.actindex.index.store.IndexReader;

/**
 * The range guard of an edge bundle: per code layer, an upper bound of the Euclidean norm of that
 * layer's activations over the index's live examples, from the kept magnitudes. A kept value is
 * quantised ({@link io.actindex.index.store.Magnitudes}): read back, it lies within half its
 * segment's step of the float that was kept ({@link IndexReader#magnitudeErrors}), plus float
 * rounding; the float lies within a relative 2^-24 of the forward pass's double. So each unit
 * counts as {@code |kept| + error}, and the layer's norm of those is widened by {@link #SLACK}
 * (0.1%, far above the float rounding: at most about 1e-4 of the unit's error plus 2^-22 of its
 * value). No live example's activations, computed by the model in double as the device computes
 * them, have a larger norm in that layer. Limit: segments kept at different bits and then merged
 * (possible through the Java API alone) were rounded twice, and the second rounding is all they
 * record; rebuild such an index before exporting a guard.
 */
final class RangeBounds {
  private RangeBounds() {}

  /** The relative widening of each bound over float rounding. */
  static final double SLACK = 1e-3;

  /** The bounds in the layout's layer order, or null when the index keeps no magnitudes. */
  static double[] of(IndexReader reader) {
    if (!reader.hasMagnitudes()) return null;
    CodeLayout layout = reader.layout();
    int d = layout.bits(), layers = layout.segments().size();
    int[] first = new int[layers + 1];
    for (int s = 0; s < layers; s++) first[s + 1] = first[s] + layout.segments().get(s).bits();
    float[] kept = new float[d], err = new float[d];
    double[] most = new double[layers];
    reader.forEachLive(id -> {
      reader.magnitudes(id, kept, 0);
      reader.magnitudeErrors(id, err, 0);
      for (int s = 0; s < layers; s++) {
        double sum = 0;
        for (int j = first[s]; j < first[s + 1]; j++) {
          double u = Math.abs((double) kept[j]) + err[j];
          sum += u * u;
        }
        most[s] = Math.max(most[s], Math.sqrt(sum));
      }
    });
    for (int s = 0; s < layers; s++) most[s] *= 1 + SLACK;
    return most;
  }
}
