package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.OutputFiles;
import io.actindex.edge.BundleFormat;
import io.actindex.edge.EdgeBundle;
import io.actindex.edge.EdgeBundle.Calibration;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.mlp.Mlp;
import io.actindex.index.store.IndexReader;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * {@code export-edge}: the index's live codes (exact duplicates stored once, with their counts,
 * most shared first), its OOD calibration and optionally its model as one edge bundle file (format:
 * {@link BundleFormat}), and optionally the same as C99 source ({@link EdgeCSource}). Everything is
 * computed and checked before the first byte is written; the bundle is written atomically.
 *
 * <pre>{@code
 * try (IndexReader r = IndexReader.open(Path.of("idx"))) {
 *   EdgeExport.Result res = EdgeExport.run(r, new EdgeExport.Params(Path.of("model.edge"), true, Path.of("c-out")));
 * }
 * }</pre>
 */
public final class EdgeExport {
  private EdgeExport() {}

  /** The bundle file, whether to include the model, and a folder for C source (null = none). */
  public record Params(Path out, boolean withModel, Path cSource) {}

  /**
   * What was written: sizes and counts, the range guard's bounds per code layer ({@link
   * RangeBounds}; null when the bundle has none), notes for the user (why there is no range guard),
   * and whether the index's live examples changed since the calibration the bundle carries as stored
   * ({@link OodCalibration#liveCheck}).
   */
  public record Result(Path out, long bytes, int uniqueCodes, long examples, double bytesPerExample, boolean withModel, List<Path> cFiles,
      double[] rangeBounds, List<String> notes, OodCalibration.LiveCheck liveCheck) {}

  public static Result run(IndexReader reader, Params p) {
    Calibration cal = OodCalibration.load(reader);
    EdgeBundle b = bundle(reader, cal, p.withModel());
    byte[] bytes = BundleFormat.toBytes(b);
    try {
      OutputFiles.checkTarget(p.out(), "`out`");
      if (p.cSource() != null) EdgeCSource.checkTargets(p.cSource(), p.out());
      OutputFiles.write(p.out(), bytes, "`out`");
      List<Path> c = p.cSource() == null ? List.of() : EdgeCSource.write(b, p.cSource());
      double[] bounds = b.hasRangeGuard() ? b.model().rangeBounds().clone() : null;
      return new Result(p.out(), bytes.length, b.uniqueCodes(), b.examples(), bytes.length / (double) b.examples(), p.withModel(), c, bounds,
          bounds != null ? List.of() : List.of(noGuard(reader, p.withModel())), OodCalibration.liveCheck(reader));
    } catch (IOException e) {
      throw new UncheckedIOException(p.out() + ": " + e.getMessage(), e);
    }
  }

  /**
   * The index's live codes, deduplicated, with {@code cal} and (if asked) the stored model; refused
   * when the index holds fewer live examples than the calibration's k (deleted since). It does not
   * compare {@code cal} with the index's live examples ({@link OodCalibration#liveCheck} does).
   */
  public static EdgeBundle bundle(IndexReader reader, Calibration cal, boolean withModel) {
    OodCalibration.requireCode(reader, "the edge bundle");
    OodScorer.checkK(reader, cal.k());
    return bundle(reader.liveCodes(null), cal, withModel ? model(reader) : null);
  }

  /**
   * A bundle of {@code codes} (in id order), exact duplicates stored once with their count, most
   * shared first (ties by first occurrence), with {@code cal} and {@code model} (either may be null).
   */
  public static EdgeBundle bundle(CodeBlock codes, Calibration cal, EdgeBundle.Model model) {
    CodeLayout layout = codes.layout();
    int w = layout.words(), n = codes.size();
    long[] words = codes.words();
    Integer[] order = new Integer[n];
    for (int i = 0; i < n; i++) order[i] = i;
    Arrays.sort(order, (a, b) -> Arrays.compareUnsigned(words, a * w, a * w + w, words, b * w, b * w + w));
    // groups of equal codes: (first position in id order, count)
    List<int[]> groups = new ArrayList<>();
    for (int i = 0; i < n; ) {
      int j = i, first = order[i];
      while (j + 1 < n && Arrays.equals(words, order[i] * w, order[i] * w + w, words, order[j + 1] * w, order[j + 1] * w + w)) {
        first = Math.min(first, order[++j]);
      }
      groups.add(new int[] {first, j - i + 1});
      i = j + 1;
    }
    groups.sort((a, b) -> a[1] != b[1] ? Integer.compare(b[1], a[1]) : Integer.compare(a[0], b[0]));
    long[] unique = new long[groups.size() * w];
    int[] counts = new int[groups.size()];
    for (int g = 0; g < counts.length; g++) {
      System.arraycopy(words, groups.get(g)[0] * w, unique, g * w, w);
      counts[g] = groups.get(g)[1];
    }
    List<String> names = new ArrayList<>();
    int[] bits = new int[layout.segments().size()];
    for (int s = 0; s < bits.length; s++) {
      names.add(layout.segments().get(s).name());
      bits[s] = layout.segments().get(s).bits();
    }
    return new EdgeBundle(names, bits, unique, counts, cal, model);
  }

  /** Why a bundle has no range guard, and what to do. */
  private static String noGuard(IndexReader reader, boolean withModel) {
    String what = "note: the bundle has no range guard (the device's check that each layer's activations stay within the training examples'"
        + " largest norm, which the code score does not see): ";
    return what + (withModel ? Refine.noMagnitudes(reader, "for it") : "it needs the model on the device; export with `withModel`");
  }

  /** The stored model in float32 with each code bit's binarization threshold, and the range guard when the index keeps magnitudes. */
  static EdgeBundle.Model model(IndexReader reader) {
    Mlp mlp = SoftmaxBaseline.model(reader);
    if (mlp == null) throw new BadInputException(reader.dir() + ": `withModel`, but the index holds no model (it was not built with `model`)");
    if (mlp.outputLayer() == null)
      throw new BadInputException(reader.dir() + ": `withModel` needs a model whose last layer is an output layer; this index's model has hidden layers only");
    CodeLayout layout = reader.layout(); // its layers may be in another order than the model's (build `layers` 2,0): the bundle follows it
    List<EdgeBundle.Layer> layers = new ArrayList<>();
    for (Mlp.Layer l : mlp.layers()) {
      float[] wt = new float[l.weight().data.length], bias = new float[l.out()];
      for (int i = 0; i < wt.length; i++) wt[i] = exactFloat(l.weight().data[i], l.name() + ".weight", reader);
      for (int i = 0; i < bias.length; i++) bias[i] = exactFloat(l.bias()[i], l.name() + ".bias", reader);
      layers.add(new EdgeBundle.Layer(l.name(), l.out(), l.in(), wt, bias));
    }
    EncodeOptions o = BuildInfo.fromProperties(reader.properties(), reader.dir().toString()).encode();
    double[] thresholds = new double[layout.bits()];
    int bit = 0;
    for (CodeLayout.Segment s : layout.segments()) {
      double[] medians = o.medians() == null ? null : o.medians().get(s.name());
      for (int u = 0; u < s.bits(); u++, bit++)
        thresholds[bit] = switch (o.rule()) {
          case POSITIVE -> 0;
          case THRESHOLD -> o.threshold();
          case MEDIAN -> {
            if (medians == null || medians.length != s.bits()) throw new BadInputException(reader.dir() + ": no stored medians for layer " + s.name());
            yield medians[u];
          }
        };
    }
    return new EdgeBundle.Model(layers, thresholds, RangeBounds.of(reader));
  }

  private static float exactFloat(double v, String tensor, IndexReader reader) {
    float f = (float) v;
    if (f != v)
      throw new BadInputException(reader.dir() + ": model tensor " + tensor + " holds values that are not exact float32; the bundle stores float32 "
          + "weights, so it would not encode exactly as the index does (save the model as F32)");
    return f;
  }
}
