package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.edge.EdgeBundle.Calibration;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.index.store.IndexReader;
import java.nio.charset.StandardCharsets;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * The stored OOD calibration of an index: the attachment {@link #ATTACHMENT}, a UTF-8 text of
 * {@code key=value} lines ({@code format=1}, {@code k}, {@code statistic} kth|mean, {@code
 * layers} comma-separated or empty, {@code tpr}, {@code threshold}, {@code scores}: the sorted
 * calibration scores, comma-separated, each written by {@link Double#toString} so it reads back
 * exactly). The store checksums attachments; this class checks the content.
 *
 * <p>The threshold rule (split conformal, Vovk, Gammerman &amp; Shafer 2005): with {@code n}
 * calibration scores sorted ascending, the threshold is the {@code j}-th smallest, {@code j =
 * ceil(tpr * (n + 1))}; a future input exchangeable with the calibration inputs then scores at or
 * below it with probability at least {@code tpr}. That needs {@code j <= n}: see {@link #minimum}.
 */
public final class OodCalibration {
  private OodCalibration() {}

  public static final String ATTACHMENT = "ood.calibration";

  /** The caution every output of {@code ood} and {@code export-edge} carries. */
  public static final String CAUTION = "A calibrated heuristic, not a guarantee: false alarms and misses occur at the stated rates only when "
      + "the calibration inputs are exchangeable with future in-distribution inputs; re-calibrate after retraining; where a wrong answer "
      + "can hurt someone, validate on the deployment's own data and follow the rules that apply there.";

  /** The calibration stored in the index; refused when there is none. */
  public static Calibration load(IndexReader reader) {
    byte[] bytes = reader.attachment(ATTACHMENT);
    if (bytes == null)
      throw new BadInputException(reader.dir() + ": no OOD calibration stored; run 'actindex ood calibrate' with held-out in-distribution inputs first");
    return parse(new String(bytes, StandardCharsets.UTF_8), reader.dir() + " attachment " + ATTACHMENT);
  }

  static byte[] toBytes(Calibration c) {
    StringBuilder s = new StringBuilder("format=1\n");
    s.append("k=").append(c.k()).append('\n');
    s.append("statistic=").append(c.statistic().label).append('\n');
    s.append("layers=").append(String.join(",", c.layers())).append('\n');
    s.append("tpr=").append(c.tpr()).append('\n');
    s.append("threshold=").append(c.threshold()).append('\n');
    s.append("scores=");
    double[] v = c.scores();
    for (int i = 0; i < v.length; i++) s.append(i == 0 ? "" : ",").append(v[i]);
    return s.append('\n').toString().getBytes(StandardCharsets.UTF_8);
  }

  static Calibration parse(String text, String source) {
    Map<String, String> kv = new LinkedHashMap<>();
    for (String line : text.split("\n")) {
      int eq = line.indexOf('=');
      if (eq > 0) kv.put(line.substring(0, eq), line.substring(eq + 1));
    }
    try {
      if (!"1".equals(kv.get("format"))) throw new IllegalArgumentException("field format: unknown version '" + kv.get("format") + "'");
      String layers = field(kv, "layers");
      String[] parts = field(kv, "scores").split(",");
      double[] scores = new double[parts.length];
      for (int i = 0; i < parts.length; i++) scores[i] = Double.parseDouble(parts[i]);
      return new Calibration(Integer.parseInt(field(kv, "k")), Statistic.ofLabel(field(kv, "statistic")),
          layers.isEmpty() ? List.of() : Arrays.asList(layers.split(",")), Double.parseDouble(field(kv, "tpr")),
          Double.parseDouble(field(kv, "threshold")), scores);
    } catch (IllegalArgumentException e) {
      throw new BadInputException(source + ": damaged calibration: " + e.getMessage(), e);
    }
  }

  private static String field(Map<String, String> kv, String name) {
    String v = kv.get(name);
    if (v == null) throw new IllegalArgumentException("field " + name + " missing");
    return v;
  }

  /** {@code j = ceil(tpr (n + 1))}, the 1-based rank of the threshold among n sorted scores. */
  static int rank(double tpr, int n) {
    return (int) Math.ceil(tpr * (n + 1) - 1e-9);
  }

  /** The fewest calibration inputs for which the threshold rank fits: {@code ceil(tpr (n + 1)) <= n}. */
  public static int minimum(double tpr) {
    int n = 1;
    while (rank(tpr, n) > n) n++;
    return n;
  }

  /** The threshold of ascending {@code sorted} scores for {@code tpr}; too few scores is refused. */
  public static double threshold(double[] sorted, double tpr, String what) {
    int need = minimum(tpr);
    if (sorted.length < need)
      throw new BadInputException(what + ": " + sorted.length + " calibration inputs; a target rate of " + tpr + " needs at least " + need);
    return sorted[rank(tpr, sorted.length) - 1];
  }
}
