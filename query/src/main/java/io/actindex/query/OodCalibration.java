package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
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
 * exactly), and, when the refined score was calibrated, {@code score=refined} and {@code candidates}
 * (absent = the code score). The store checksums attachments; this class checks the content.
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

  /** Which score a calibration holds, and the Hamming candidates the refined score re-ranks (0 for the code score). */
  public record Scoring(OodScorer.Kind kind, int candidates) {
    public static final Scoring CODE = new Scoring(OodScorer.Kind.CODE, 0);

    /**
     * The score in force, one of four fixed names: {@code code k-th distance}, {@code code mean
     * distance} (Hamming distances on codes), {@code refined cosine k-th distance}, {@code refined
     * cosine mean distance} (cosine distances to kept magnitudes among the Hamming candidates).
     */
    public String name(Statistic statistic) {
      return (kind == OodScorer.Kind.CODE ? "code " : "refined cosine ") + (statistic == Statistic.MEAN ? "mean distance" : "k-th distance");
    }
  }

  /** The scoring the stored calibration used (refused when there is none). */
  public static Scoring scoring(IndexReader reader) {
    load(reader);
    Map<String, String> kv = fields(new String(reader.attachment(ATTACHMENT), StandardCharsets.UTF_8));
    String score = kv.getOrDefault("score", "code");
    String source = reader.dir() + " attachment " + ATTACHMENT;
    OodScorer.Kind kind;
    try {
      kind = OodScorer.Kind.parse(score);
    } catch (BadParameterException e) { // the stored name, not a --score typed: the calibration is damaged
      throw new BadInputException(source + ": damaged calibration: field score" + e.rest(), e);
    }
    if (kind == OodScorer.Kind.CODE) return Scoring.CODE;
    try {
      int candidates = intField(kv, "candidates");
      if (candidates < 1) throw new IllegalArgumentException("field candidates: " + candidates + " is below 1");
      return new Scoring(kind, candidates);
    } catch (IllegalArgumentException e) {
      throw new BadInputException(source + ": damaged calibration: " + e.getMessage(), e);
    }
  }

  /**
   * The scorer for the stored calibration {@code cal}; {@code asked} (null = the stored one) that
   * differs from the stored score is refused: thresholds of one score mean nothing for the other.
   */
  public static OodScorer scorer(IndexReader reader, Calibration cal, OodScorer.Kind asked) {
    Scoring s = scoring(reader);
    if (asked != null && asked != s.kind())
      throw new BadInputException("--score " + asked.label() + ": the calibration stored in " + reader.dir() + " uses the " + s.kind().label()
          + " score; run 'actindex ood calibrate --score " + asked.label() + "' first, or drop --score");
    return new OodScorer(reader, cal.k(), cal.statistic(), cal.layers(), s.kind(), s.candidates());
  }

  /** Refuses a refined calibration where only the code score applies ({@code what}: the option or command). */
  public static void requireCode(IndexReader reader, String what) {
    if (scoring(reader).kind() != OodScorer.Kind.CODE)
      throw new BadInputException(what + " uses the code score, but the calibration stored in " + reader.dir()
          + " uses the refined score; calibrate with --score code for it");
  }

  static byte[] toBytes(Calibration c) {
    return toBytes(c, Scoring.CODE);
  }

  static byte[] toBytes(Calibration c, Scoring scoring) {
    StringBuilder s = new StringBuilder("format=1\n");
    if (scoring.kind() != OodScorer.Kind.CODE)
      s.append("score=").append(scoring.kind().label()).append('\n').append("candidates=").append(scoring.candidates()).append('\n');
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

  private static Map<String, String> fields(String text) {
    Map<String, String> kv = new LinkedHashMap<>();
    for (String line : text.split("\n")) {
      int eq = line.indexOf('=');
      if (eq > 0) kv.put(line.substring(0, eq), line.substring(eq + 1));
    }
    return kv;
  }

  static Calibration parse(String text, String source) {
    Map<String, String> kv = fields(text);
    try {
      if (!"1".equals(kv.get("format"))) throw new IllegalArgumentException("field format: unknown version '" + kv.get("format") + "'");
      String layers = field(kv, "layers");
      String[] parts = field(kv, "scores").split(",");
      double[] scores = new double[parts.length];
      for (int i = 0; i < parts.length; i++) scores[i] = number("scores", parts[i]);
      return new Calibration(intField(kv, "k"), Statistic.ofLabel(field(kv, "statistic")),
          layers.isEmpty() ? List.of() : Arrays.asList(layers.split(",")), number("tpr", field(kv, "tpr")),
          number("threshold", field(kv, "threshold")), scores);
    } catch (IllegalArgumentException e) {
      throw new BadInputException(source + ": damaged calibration: " + e.getMessage(), e);
    }
  }

  private static String field(Map<String, String> kv, String name) {
    String v = kv.get(name);
    if (v == null) throw new IllegalArgumentException("field " + name + " missing");
    return v;
  }

  private static int intField(Map<String, String> kv, String name) {
    String v = field(kv, name);
    try {
      return Integer.parseInt(v);
    } catch (NumberFormatException e) {
      throw new IllegalArgumentException("field " + name + ": " + BadInputException.quote(v) + " is not a whole number");
    }
  }

  /** {@code text}, a value of field {@code name}, as a number. */
  private static double number(String name, String text) {
    try {
      return Double.parseDouble(text);
    } catch (NumberFormatException e) {
      throw new IllegalArgumentException("field " + name + ": " + BadInputException.quote(text) + " is not a number");
    }
  }

  /** {@code j = ceil(tpr (n + 1))}, the 1-based rank of the threshold among n sorted scores. */
  static long rank(double tpr, long n) {
    return (long) Math.ceil(tpr * (n + 1) - 1e-9);
  }

  /**
   * The fewest calibration inputs for which the threshold rank fits: {@code ceil(tpr (n + 1)) <= n},
   * that is {@code n >= (tpr - 1e-9) / (1 - tpr)}; the search starts just below that bound (a count
   * up from 1 took seconds and stopped at the int range for a rate near 1, naming a wrong count).
   */
  public static long minimum(double tpr) {
    long n = Math.max(1, (long) ((tpr - 1e-9) / (1 - tpr)) - 2);
    while (rank(tpr, n) > n) n++;
    return n;
  }

  /** The threshold of ascending {@code sorted} scores for {@code tpr}; too few scores is refused. */
  public static double threshold(double[] sorted, double tpr, String what) {
    long need = minimum(tpr);
    if (sorted.length < need)
      throw new BadInputException(what + ": " + sorted.length + " calibration inputs; a target rate of " + tpr + " needs at least " + need);
    return sorted[(int) rank(tpr, sorted.length) - 1];
  }
}
