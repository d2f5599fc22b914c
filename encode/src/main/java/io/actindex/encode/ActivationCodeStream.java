package io.actindex.encode;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import java.io.IOException;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;

/** Binarizes the layers of a {@link LayerSource} chunk by chunk into codes, one segment per layer. */
final class ActivationCodeStream implements CodeStream {
  /** Values per internal chunk (all layers together). */
  static final int CHUNK_VALUES = 1 << 18;

  private final LayerSource src;
  private final EncodeOptions options;
  private final CodeLayout layout;
  private final Binarizer[] binarizers;
  private final NeuronStats stats;
  private final int[] widths;
  private final int chunkRows;
  private final float[][] f;
  private final double[][] d;
  private int lastRows;
  private long lastStart; // row number of the last chunk's first row
  private float[] activations;
  private boolean activationsCast; // whether activations holds far values cast (lastActivations(true))

  ActivationCodeStream(LayerSource.Opener opener, EncodeOptions o) throws IOException {
    if (o.rule() == BinarizeRule.MEDIAN && o.medians() == null) {
      try (LayerSource first = opener.open()) {
        o = o.withMedians(Medians.compute(first));
      }
    }
    this.options = o;
    this.src = opener.open();
    try {
      List<String> names = src.names();
      this.widths = src.widths();
      List<CodeLayout.Segment> segs = new ArrayList<>();
      for (int i = 0; i < names.size(); i++) {
        try {
          segs.add(new CodeLayout.Segment(names.get(i), widths[i]));
        } catch (IllegalArgumentException e) {
          throw new BadInputException(src.source() + ": layer " + BadInputException.quote(names.get(i))
              + " cannot name a code segment (a name is non-empty, without ',', ':' or spaces)");
        }
      }
      this.layout = new CodeLayout(segs);
      this.binarizers = new Binarizer[names.size()];
      for (int i = 0; i < names.size(); i++) binarizers[i] = new Binarizer(layout.start(i), widths[i], thresholds(o, names.get(i), widths[i]));
      this.stats = new NeuronStats(layout);
      this.chunkRows = Math.max(1, CHUNK_VALUES / layout.bits());
      this.f = new float[names.size()][];
      this.d = new double[names.size()][];
      for (int i = 0; i < names.size(); i++) {
        if (src.floats(i)) f[i] = new float[chunkRows * widths[i]];
        else d[i] = new double[chunkRows * widths[i]];
      }
    } catch (RuntimeException e) {
      src.close();
      throw e;
    }
  }

  private double[] thresholds(EncodeOptions o, String layer, int width) {
    return switch (o.rule()) {
      case POSITIVE -> new double[] {0};
      case THRESHOLD -> new double[] {o.threshold()};
      case MEDIAN -> {
        Map<String, double[]> m = o.medians();
        double[] med = m.get(layer);
        if (med == null) throw new BadInputException(src.source() + ": no per-neuron medians for layer " + BadInputException.quote(layer) + " (medians given for " + m.keySet() + ")");
        if (med.length != width)
          throw new BadInputException(src.source() + ": layer " + BadInputException.quote(layer) + " has " + width + " neurons but its medians have " + med.length + " values");
        yield med;
      }
    };
  }

  @Override
  public CodeLayout layout() {
    return layout;
  }

  @Override
  public long rows() {
    return src.rows();
  }

  @Override
  public CodeBlock next(int maxRows) throws IOException {
    CodeStream.checkMaxRows(maxRows);
    int m = src.read(Math.min(maxRows, chunkRows), f, d);
    if (m == 0) return null;
    lastStart += lastRows;
    int words = layout.words();
    long[] out = new long[m * words];
    for (int i = 0; i < binarizers.length; i++) {
      if (src.floats(i)) binarizers[i].apply(f[i], m, out, words);
      else binarizers[i].apply(d[i], m, out, words);
    }
    CodeBlock block = new CodeBlock(layout, m, out);
    stats.add(block);
    lastRows = m;
    activations = null;
    return block;
  }

  @Override
  public float[] lastActivations() {
    return lastActivations(false);
  }

  @Override
  public float[] lastActivations(boolean castFar) {
    if (lastRows == 0) return null;
    if (activations != null && activationsCast == castFar) return activations;
    int bits = layout.bits();
    float[] a = new float[lastRows * bits];
    for (int i = 0; i < widths.length; i++) {
      int start = layout.start(i), w = widths[i];
      for (int r = 0; r < lastRows; r++) {
        if (src.floats(i)) System.arraycopy(f[i], r * w, a, r * bits + start, w);
        else for (int c = 0; c < w; c++) a[r * bits + start + c] = toFloat(d[i][r * w + c], i, r, c, castFar);
      }
    }
    activationsCast = castFar;
    return activations = a;
  }

  /**
   * A value kept as a float32 activation; one beyond float32's range is refused (it would become
   * infinite), or with {@code castFar} kept as the cast makes it, +-Infinity. NaN is refused either way.
   */
  private float toFloat(double v, int layer, int row, int col, boolean castFar) {
    float f = (float) v;
    if (Float.isFinite(f) || (castFar && !Double.isNaN(v))) return f;
    String layerName = "layer " + BadInputException.quote(src.names().get(layer));
    boolean throughModel = !src.rowSource().equals(src.source());
    String where = throughModel
        ? src.rowSource() + ": row " + (lastStart + row) + " (0-based) through the model " + src.source() + ", " + layerName + ", unit " + col
        : src.source() + ": " + (widths.length > 1 ? layerName + ", " : "") + "row " + (lastStart + row) + ", column " + col + " (0-based)";
    throw new BadInputException(where + ": value " + v + " does not fit the float32 in which activations"
        + " are kept (at most about 3.4e38); scale the " + (throughModel ? "inputs" : "activations")
        + ", or build with `magnitudeBits 0` to keep none");
  }

  @Override
  public NeuronStats stats() {
    return stats;
  }

  @Override
  public EncodeOptions options() {
    return options;
  }

  @Override
  public List<String> notes() {
    return src.notes();
  }

  @Override
  public List<String> columnNames() {
    return src.columnNames();
  }

  @Override
  public void close() throws IOException {
    src.close();
  }
}
