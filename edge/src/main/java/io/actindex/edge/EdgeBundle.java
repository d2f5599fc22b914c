package io.actindex.edge;

import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * What a device needs to flag out-of-distribution inputs without the index: the code layout, the
 * unique training codes with how many training examples share each (most shared first), the
 * calibration (k, statistic, layers, threshold, sorted calibration scores), and optionally the MLP
 * that turns raw inputs into codes. Read one with {@link BundleFormat#read}; the byte format is
 * specified there. Immutable and thread-safe.
 *
 * <p>Scores follow Sun, Ming, Zhu &amp; Li, "Out-of-Distribution Detection with Deep Nearest
 * Neighbors", ICML 2022, applied to codes: the Hamming distance from the input's code to its k-th
 * nearest training example (each example counts, so a code shared by 3 examples counts 3 times),
 * or the mean of the k nearest distances, on the calibrated layers. Higher = further from the
 * training data. The p-value is the conformal one of Vovk, Gammerman &amp; Shafer, "Algorithmic
 * Learning in a Random World", 2005: {@code (1 + #{calibration scores >= s}) / (n + 1)}.
 *
 * <p>A calibrated heuristic, not a guarantee: the stated false-alarm rate holds only when the
 * calibration inputs are exchangeable with future in-distribution inputs; re-calibrate after
 * retraining, and where a wrong answer can hurt someone validate on the deployment's own data and
 * follow the rules that apply there.
 *
 * <pre>{@code
 * EdgeBundle b = BundleFormat.read(Path.of("model.edge"));
 * EdgeBundle.Score s = b.score(b.encode(pixels));      // needs a bundle exported --with-model
 * boolean out = b.isOut(code);                          // decision only: stops early when in
 * double p = b.pValue(s.value());
 * EdgeBundle.Encoded e = b.encodeWithRange(pixels);     // the code and the range ratio, one pass (hasRangeGuard())
 * boolean beyond = e.range() > 1;                       // some layer's activations larger than every training example's
 * }</pre>
 */
public final class EdgeBundle {

  /** Which number of the k nearest distances is the score; ids are the bundle's. */
  public enum Statistic {
    /** The distance to the k-th nearest training example. */
    KTH(1, "kth"),
    /** The mean of the k nearest distances. */
    MEAN(2, "mean");

    public final int id;
    public final String label;

    Statistic(int id, String label) {
      this.id = id;
      this.label = label;
    }

    public static Statistic ofId(int id) {
      for (Statistic s : values()) if (s.id == id) return s;
      throw new IllegalArgumentException("unknown statistic id " + id);
    }

    public static Statistic ofLabel(String label) {
      for (Statistic s : values()) if (s.label.equals(label)) return s;
      throw new IllegalArgumentException("unknown statistic '" + label + "' (kth or mean)");
    }
  }

  /**
   * How scores become decisions: {@code k} nearest, the statistic, the layers counted (empty = all),
   * the target share of in-distribution inputs accepted, the threshold (out when score &gt;
   * threshold), and the calibration scores in ascending order.
   */
  public record Calibration(int k, Statistic statistic, List<String> layers, double tpr, double threshold, double[] scores) {
    public Calibration {
      layers = List.copyOf(layers);
      scores = scores.clone();
      if (k < 1) throw new IllegalArgumentException("calibration k " + k + " is below 1");
      if (!(tpr > 0 && tpr < 1)) throw new IllegalArgumentException("calibration tpr " + tpr + " is not in (0, 1)");
      if (!Double.isFinite(threshold)) throw new IllegalArgumentException("calibration threshold is not finite");
      if (scores.length == 0) throw new IllegalArgumentException("calibration holds no scores");
      for (int i = 0; i < scores.length; i++) {
        if (!Double.isFinite(scores[i])) throw new IllegalArgumentException("calibration score " + i + " is not finite");
        if (i > 0 && scores[i - 1] > scores[i]) throw new IllegalArgumentException("calibration scores not ascending at " + i);
      }
    }

    @Override
    public double[] scores() {
      return scores.clone();
    }
  }

  /** One linear layer: {@code weight} is {@code out x in}, row-major (PyTorch's {@code [out, in]}). */
  public record Layer(String name, int out, int in, float[] weight, float[] bias) {
    public Layer {
      if (out < 1 || in < 1) throw new IllegalArgumentException("layer " + name + " has shape [" + out + ", " + in + "]");
      if (weight.length != (long) out * in) throw new IllegalArgumentException("layer " + name + ": weight has " + weight.length + " values");
      if (bias.length != out) throw new IllegalArgumentException("layer " + name + ": bias has " + bias.length + " values");
      for (int i = 0; i < weight.length; i++)
        if (!Float.isFinite(weight[i])) throw new IllegalArgumentException("layer " + name + ": weight " + i + " is not finite");
      for (int i = 0; i < out; i++) if (!Float.isFinite(bias[i])) throw new IllegalArgumentException("layer " + name + ": bias " + i + " is not finite");
    }
  }

  /**
   * The MLP (ReLU between layers, none after the last), the binarization threshold of each code
   * bit (bit {@code i} is on when its neuron's activation after ReLU is {@code > thresholds[i]}),
   * and the range guard, or null: per code layer, in the layout's order, an upper bound of the
   * Euclidean norm of that layer's activations over the training examples ({@link #encodeWithRange}).
   */
  public record Model(List<Layer> layers, double[] thresholds, double[] rangeBounds) {
    public Model {
      layers = List.copyOf(layers);
      thresholds = thresholds.clone();
      rangeBounds = rangeBounds == null ? null : rangeBounds.clone();
      if (layers.size() < 2) throw new IllegalArgumentException("the model needs a hidden layer and an output layer");
      for (int i = 1; i < layers.size(); i++)
        if (layers.get(i).in() != layers.get(i - 1).out())
          throw new IllegalArgumentException("layer " + layers.get(i).name() + " takes " + layers.get(i).in() + " inputs, the layer before gives "
              + layers.get(i - 1).out());
      for (double t : thresholds) if (!Double.isFinite(t)) throw new IllegalArgumentException("a binarization threshold is not finite");
      if (rangeBounds != null)
        for (int i = 0; i < rangeBounds.length; i++)
          if (!(rangeBounds[i] >= 0 && rangeBounds[i] < Double.POSITIVE_INFINITY))
            throw new IllegalArgumentException("range bound " + i + " is " + rangeBounds[i] + "; a bound is finite and >= 0");
    }

    /** A model without a range guard. */
    public Model(List<Layer> layers, double[] thresholds) {
      this(layers, thresholds, null);
    }
  }

  /**
   * A raw input's code and its range ratio, from one forward pass: the largest, over the code
   * layers, of the layer's activation norm divided by its {@link Model#rangeBounds() bound}. Above 1,
   * some layer's activations are larger than every training example's there.
   */
  public record Encoded(long[] code, double range) {}

  /**
   * The score of one code: the k-th nearest distance, the mean of the k nearest, how many training
   * examples share the code exactly on the scored layers (its own region), and {@code value}, the
   * calibrated statistic.
   */
  public record Score(int kth, double mean, long ownRegion, double value) {}

  private final List<String> layerNames;
  private final int[] layerBits;
  private final int bits, words, n;
  private final long ghost; // the bits of a code's last word past its width
  private final long[] codes;
  private final int[] counts;
  private final long examples;
  private final Calibration calibration;
  private final long[] mask; // bits the calibration counts; null = all
  private final Model model;
  private final int[] keptHidden; // per hidden layer of the model: its segment index, or -1

  /**
   * Checks and wraps the parts; {@code codes} holds {@code counts.length} codes of the layout's
   * words each, {@code counts} are positive and non-increasing. {@code calibration} and {@code
   * model} may be null. Throws {@link IllegalArgumentException} naming what is inconsistent.
   */
  public EdgeBundle(List<String> layerNames, int[] layerBits, long[] codes, int[] counts, Calibration calibration, Model model) {
    this.layerNames = List.copyOf(layerNames);
    this.layerBits = layerBits.clone();
    if (layerNames.isEmpty() || layerNames.size() != layerBits.length) throw new IllegalArgumentException("layout has no layers or mismatched widths");
    long total = 0;
    for (int i = 0; i < layerBits.length; i++) {
      if (layerBits[i] < 1) throw new IllegalArgumentException("layer " + layerNames.get(i) + " has " + layerBits[i] + " bits");
      if (layerNames.subList(0, i).contains(layerNames.get(i))) throw new IllegalArgumentException("layer " + layerNames.get(i) + " appears twice");
      total += layerBits[i];
    }
    if (total > 1 << 24) throw new IllegalArgumentException("code of " + total + " bits is too long");
    bits = (int) total;
    words = (bits + 63) >>> 6;
    n = counts.length;
    if ((long) n * words != codes.length) throw new IllegalArgumentException(n + " codes need " + (long) n * words + " words, got " + codes.length);
    ghost = (bits & 63) == 0 ? 0 : -1L << (bits & 63);
    long sum = 0;
    for (int i = 0; i < n; i++) {
      if (counts[i] < 1) throw new IllegalArgumentException("count of code " + i + " is " + counts[i]);
      if (i > 0 && counts[i] > counts[i - 1]) throw new IllegalArgumentException("counts not in descending order at code " + i);
      if ((codes[i * words + words - 1] & ghost) != 0) throw new IllegalArgumentException("code " + i + " has bits beyond " + bits);
      sum += counts[i];
    }
    this.codes = codes.clone();
    this.counts = counts.clone();
    this.examples = sum;
    this.calibration = calibration;
    if (calibration != null && calibration.k() > sum)
      throw new IllegalArgumentException("calibration k " + calibration.k() + " exceeds the " + sum + " training examples");
    this.mask = calibration == null || calibration.layers().isEmpty() ? null : mask(calibration.layers());
    this.model = model;
    this.keptHidden = model == null ? null : keptHidden(model);
  }

  private int[] keptHidden(Model m) {
    if (m.rangeBounds() != null && m.rangeBounds().length != layerNames.size())
      throw new IllegalArgumentException("model has " + m.rangeBounds().length + " range bounds for " + layerNames.size() + " code layers");
    int hidden = m.layers().size() - 1;
    int[] kept = new int[hidden];
    boolean[] found = new boolean[layerNames.size()];
    for (int l = 0; l < hidden; l++) { // the code layout may name the layers in another order than the model computes them
      Layer layer = m.layers().get(l);
      int s = layerNames.indexOf(layer.name());
      if (s >= 0 && layerBits[s] != layer.out())
        throw new IllegalArgumentException("model layer " + layer.name() + " has " + layer.out() + " neurons, the code layout " + layerBits[s] + " bits");
      if (s >= 0 && found[s]) throw new IllegalArgumentException("model layer " + layer.name() + " appears twice");
      kept[l] = s;
      if (s >= 0) found[s] = true;
    }
    for (int s = 0; s < found.length; s++)
      if (!found[s]) throw new IllegalArgumentException("code layer " + layerNames.get(s) + " is no hidden layer of the model");
    if (m.thresholds().length != bits) throw new IllegalArgumentException("model has " + m.thresholds().length + " thresholds for " + bits + " bits");
    return kept;
  }

  /** The first bit of code layer (segment) {@code s}: the widths of the layers before it in the layout. */
  public int firstBit(int s) {
    int first = 0;
    for (int i = 0; i < s; i++) first += layerBits[i];
    return first;
  }

  /** A mask with the bits of the named layers set. */
  public long[] mask(List<String> names) {
    long[] m = new long[words];
    for (String name : names) {
      int s = layerNames.indexOf(name);
      if (s < 0) throw new IllegalArgumentException("unknown layer '" + name + "'; layers: " + layerNames);
      int from = 0;
      for (int i = 0; i < s; i++) from += layerBits[i];
      for (int b = from; b < from + layerBits[s]; b++) m[b >>> 6] |= 1L << (b & 63);
    }
    return m;
  }

  public List<String> layerNames() {
    return layerNames;
  }

  public int[] layerBits() {
    return layerBits.clone();
  }

  /** Bits per code. */
  public int bits() {
    return bits;
  }

  /** 64-bit words per code. */
  public int words() {
    return words;
  }

  /** Number of unique codes. */
  public int uniqueCodes() {
    return n;
  }

  /** Number of training examples (the sum of the counts). */
  public long examples() {
    return examples;
  }

  /** Unique code {@code i} (a copy). */
  public long[] code(int i) {
    return Arrays.copyOfRange(codes, i * words, (i + 1) * words);
  }

  /** Training examples sharing unique code {@code i}. */
  public int count(int i) {
    return counts[i];
  }

  /** The calibration, or null if the bundle has none. */
  public Calibration calibration() {
    return calibration;
  }

  /** The model, or null. */
  public Model model() {
    return model;
  }

  /** The calibrated score of {@code code}: its calibration's k, statistic and layers. */
  public Score score(long[] code) {
    Calibration c = requireCalibration();
    return score(code, c.k(), mask, c.statistic());
  }

  /**
   * The score of {@code code} for any {@code k} (1 to {@link #examples()}) on the bits of {@code
   * mask} (null = all): one pass over the unique codes, a histogram of distances weighted by counts.
   */
  public Score score(long[] code, int k, long[] mask, Statistic statistic) {
    code = checkCode(code);
    if (k < 1 || k > examples) throw new IllegalArgumentException("k " + k + " is outside 1.." + examples);
    long[] hist = new long[bits + 1];
    if (mask == null && words == 4) { // 256-bit codes: the query stays in registers
      long q0 = code[0], q1 = code[1], q2 = code[2], q3 = code[3];
      for (int i = 0, o = 0; i < n; i++, o += 4)
        hist[Long.bitCount(q0 ^ codes[o]) + Long.bitCount(q1 ^ codes[o + 1]) + Long.bitCount(q2 ^ codes[o + 2])
            + Long.bitCount(q3 ^ codes[o + 3])] += counts[i];
    } else {
      for (int i = 0; i < n; i++) hist[distance(code, i, mask)] += counts[i];
    }
    long need = k;
    double sum = 0;
    int kth = 0;
    for (int d = 0; d <= bits; d++) {
      long take = Math.min(hist[d], need);
      sum += (double) take * d;
      need -= take;
      if (need == 0) {
        kth = d;
        break;
      }
    }
    double mean = sum / k;
    return new Score(kth, mean, hist[0], statistic == Statistic.MEAN ? mean : kth);
  }

  /**
   * Decision only: true when the calibrated score is above the threshold (out of distribution).
   * Walks the unique codes most-shared first and answers "in" as soon as {@code k} training examples
   * lie within the threshold (then the k-th distance, and the mean of the k nearest, are within it);
   * otherwise it has seen every code, and for the k-th distance that settles "out". Agrees with
   * {@code score(code).value() > threshold} on every input.
   */
  public boolean isOut(long[] code) {
    Calibration c = requireCalibration();
    code = checkCode(code);
    double t = c.threshold();
    if (t < 0) return true;
    int r = (int) Math.min(Math.floor(t), bits);
    long within = 0;
    int k = c.k();
    if (mask == null && words == 4) { // 256-bit codes: the query stays in registers
      long q0 = code[0], q1 = code[1], q2 = code[2], q3 = code[3];
      for (int i = 0, o = 0; i < n; i++, o += 4)
        if (Long.bitCount(q0 ^ codes[o]) + Long.bitCount(q1 ^ codes[o + 1]) + Long.bitCount(q2 ^ codes[o + 2])
            + Long.bitCount(q3 ^ codes[o + 3]) <= r && (within += counts[i]) >= k) return false;
    } else {
      for (int i = 0; i < n; i++) if (distance(code, i, mask) <= r && (within += counts[i]) >= k) return false;
    }
    if (c.statistic() == Statistic.KTH) return true;
    return score(code).value() > t;
  }

  /** Conformal p-value of a score: {@code (1 + #{calibration scores >= s}) / (n + 1)}. */
  public double pValue(double s) {
    return pValue(requireCalibration().scores, s);
  }

  /** {@code (1 + #{sorted[i] >= s}) / (sorted.length + 1)} for ascending {@code sorted}. */
  public static double pValue(double[] sorted, double s) {
    int lo = 0, hi = sorted.length; // first index with sorted[i] >= s
    while (lo < hi) {
      int mid = (lo + hi) >>> 1;
      if (sorted[mid] < s) lo = mid + 1;
      else hi = mid;
    }
    return (1.0 + (sorted.length - lo)) / (sorted.length + 1.0);
  }

  /**
   * The code of a raw input, through the bundle's model: exactly what the index's encoder gives.
   * Throws {@link IllegalArgumentException} when an input value is NaN or infinite, or a hidden
   * activation is not finite (the input is too large for the weights), where the index refuses the
   * row too (an infinite input can reach a finite code when every weight on it has one sign).
   */
  public long[] encode(double[] input) {
    return forward(input, false).code();
  }

  /**
   * {@link #encode} and the range ratio in the same pass: for each code layer {@code l}, the
   * Euclidean norm of its activations (after ReLU, in double) divided by its bound, {@code
   * sqrt(sum h^2) / rangeBounds[l]}; the ratio is the largest of these. A layer whose bound is 0
   * (every unit 0 on every training example) gives 0 while it stays all zero and +Infinity as soon
   * as one of its units is positive: then too it is larger than every training example's. Refuses
   * what {@code encode} refuses; throws {@link IllegalStateException} when the bundle holds no range
   * guard ({@link #hasRangeGuard}).
   */
  public Encoded encodeWithRange(double[] input) {
    if (!hasRangeGuard())
      throw new IllegalStateException("the bundle holds no range guard: export it with `withModel` from an index that keeps magnitudes");
    return forward(input, true);
  }

  /** True when the bundle holds a model with a range guard, so {@link #encodeWithRange} can answer. */
  public boolean hasRangeGuard() {
    return model != null && model.rangeBounds() != null;
  }

  private Encoded forward(double[] input, boolean range) {
    Model m = requireModel();
    long[] code = new long[words];
    double[] h = checkInput(m, input);
    double ratio = 0;
    for (int l = 0; l < keptHidden.length; l++) {
      h = layer(m.layers().get(l), h, true);
      for (int o = 0; o < h.length; o++) // as the index: an overflow is refused, never read as a bit
        if (!Double.isFinite(h[o]))
          throw new IllegalArgumentException("layer " + m.layers().get(l).name() + ", unit " + o + " overflows (" + h[o]
              + "); the input is too large for the weights");
      if (keptHidden[l] < 0) continue;
      int bit = firstBit(keptHidden[l]); // the layer's bits where the layout puts them
      for (double v : h) {
        if (v > m.thresholds()[bit]) code[bit >>> 6] |= 1L << (bit & 63);
        bit++;
      }
      if (range) {
        double r = normOver(h, m.rangeBounds()[keptHidden[l]]);
        if (r > ratio) ratio = r;
      }
    }
    return new Encoded(code, range ? ratio : Double.NaN);
  }

  /**
   * {@code sqrt(sum h^2) / bound} for activations {@code h >= 0} and a finite {@code bound >= 0}: 0
   * when every activation is 0, else +Infinity when the bound is 0. The activations and the bound are
   * first scaled by powers of two (exact), so no square overflows (activations of 1.4e154 or more
   * did, giving +Infinity) or underflows; the result is the correctly rounded ratio, +Infinity only
   * when the ratio itself exceeds {@link Double#MAX_VALUE}. Where the unscaled sum neither overflows
   * nor underflows it is the same double as {@code Math.sqrt(s) / bound}. The generated C
   * (EdgeCSource) computes the same, in the same order.
   */
  static double normOver(double[] h, double bound) {
    double top = 0;
    for (double v : h) top = Math.max(top, v);
    if (top == 0) return 0;
    if (bound == 0) return Double.POSITIVE_INFINITY;
    int e = Math.getExponent(top), eb = Math.getExponent(bound);
    double q = 0;
    for (double v : h) {
      double u = Math.scalb(v, -e);
      q += u * u;
    }
    return Math.scalb(Math.sqrt(q) / Math.scalb(bound, -eb), e - eb);
  }

  /** {@code input} when it is as wide as the model's inputs and every value is finite, else an {@link IllegalArgumentException}. */
  private static double[] checkInput(Model m, double[] input) {
    if (input.length != m.layers().get(0).in())
      throw new IllegalArgumentException("input has " + input.length + " values, the model takes " + m.layers().get(0).in());
    for (int j = 0; j < input.length; j++)
      if (!Double.isFinite(input[j])) throw new IllegalArgumentException("input " + j + " is " + input[j] + "; only finite numbers are accepted");
    return input;
  }

  /**
   * The largest softmax probability of the model's output layer for a raw input (Hendrycks &amp;
   * Gimpel, ICLR 2017): a baseline, kept apart from the code score. Refuses the inputs {@link
   * #encode} refuses (a wrong width, NaN or an infinity) with an {@link IllegalArgumentException}.
   */
  public double maxSoftmax(double[] input) {
    Model m = requireModel();
    double[] h = checkInput(m, input);
    for (int l = 0; l < m.layers().size(); l++) h = layer(m.layers().get(l), h, l < m.layers().size() - 1);
    return maxSoftmaxOf(h);
  }

  /**
   * {@code max_i softmax(logits)_i}, computed stably. A single logit {@code z} is a binary head
   * (scikit-learn's {@code MLPClassifier} on two classes has one output unit with the logistic
   * function, {@code predict_proba = [1 - s, s]}, {@code s = 1 / (1 + e^-z)}; so does a PyTorch
   * {@code BCEWithLogitsLoss} head): it counts as the two logits {@code (0, z)}, whose softmax is
   * that pair. Softmax over the one logit alone would be 1 for every input.
   */
  public static double maxSoftmaxOf(double[] logits) {
    if (logits.length == 1) return 1 / (1 + Math.exp(-Math.abs(logits[0]))); // max(s, 1 - s)
    double max = Double.NEGATIVE_INFINITY;
    for (double v : logits) max = Math.max(max, v);
    double sum = 0;
    for (double v : logits) sum += Math.exp(v - max);
    return 1.0 / sum;
  }

  /** {@code relu?(h W^T + b)}, summed in the order the index's forward pass sums. */
  private static double[] layer(Layer layer, double[] h, boolean relu) {
    double[] z = new double[layer.out()];
    int in = layer.in();
    float[] w = layer.weight();
    for (int o = 0; o < z.length; o++) {
      double s = 0;
      for (int j = 0; j < in; j++) s += h[j] * w[o * in + j];
      double v = s + layer.bias()[o];
      z[o] = relu && v <= 0 ? 0 : v; // NaN passes, so encode can refuse an overflow
    }
    return z;
  }

  private int distance(long[] q, int i, long[] m) {
    int d = 0, off = i * words;
    if (m == null) for (int w = 0; w < words; w++) d += Long.bitCount(q[w] ^ codes[off + w]);
    else for (int w = 0; w < words; w++) d += Long.bitCount((q[w] ^ codes[off + w]) & m[w]);
    return d;
  }

  /**
   * The code, checked for its length, with any bits of its last word past the code width cleared
   * (a copy then): they are no positions of the code and never count, as in the index's searchers.
   */
  private long[] checkCode(long[] code) {
    if (code.length != words) throw new IllegalArgumentException("code has " + code.length + " words, the bundle's codes have " + words);
    if ((code[words - 1] & ghost) == 0) return code;
    long[] clean = code.clone();
    clean[words - 1] &= ~ghost;
    return clean;
  }

  private Calibration requireCalibration() {
    if (calibration == null) throw new IllegalStateException("the bundle holds no calibration: run 'actindex ood calibrate' before export-edge");
    return calibration;
  }

  private Model requireModel() {
    if (model == null) throw new IllegalStateException("the bundle holds no model: export it with `withModel` (EdgeExport.Params)");
    return model;
  }

  /** The layer names of the code layout, for messages. */
  @Override
  public String toString() {
    List<String> l = new ArrayList<>();
    for (int i = 0; i < layerBits.length; i++) l.add(layerNames.get(i) + ":" + layerBits[i]);
    return "edge bundle " + String.join(",", l) + ", " + n + " unique codes of " + examples + " examples"
        + (calibration == null ? "" : ", k=" + calibration.k() + " " + calibration.statistic().label + " threshold " + calibration.threshold())
        + (model == null ? "" : ", with model") + (hasRangeGuard() ? " and range guard" : "");
  }
}
