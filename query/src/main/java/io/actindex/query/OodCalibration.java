package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.edge.EdgeBundle.Calibration;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.index.store.IndexReader;
import java.math.BigDecimal;
import java.math.MathContext;
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
 * exactly), and, when a score on kept magnitudes was calibrated, {@code score=refined} (cosine) or
 * {@code score=euclidean}, and {@code candidates} (absent = the code score; a reader that does not
 * know the stored name refuses the calibration as damaged, naming the field). Since the live-set record, also {@code live} (the index's live examples
 * when it was calibrated) and {@code live_ids} (their {@link LiveSet#fingerprint}, 16 lowercase hex
 * digits), both or neither: a calibration without them (written before) reads as {@link
 * LiveSet#UNRECORDED}. The store checksums attachments; this class checks the content.
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

  /** Which score a calibration holds, and the Hamming candidates the refined and euclidean scores re-rank (0 for the code score). */
  public record Scoring(OodScorer.Kind kind, int candidates) {
    public static final Scoring CODE = new Scoring(OodScorer.Kind.CODE, 0);

    /**
     * The score in force, one of six fixed names: {@code code k-th distance}, {@code code mean
     * distance} (Hamming distances on codes), {@code refined cosine k-th distance}, {@code refined
     * cosine mean distance} (cosine distances to kept magnitudes among the Hamming candidates),
     * {@code refined euclidean k-th distance}, {@code refined euclidean mean distance} (Euclidean
     * distances to the same).
     */
    public String name(Statistic statistic) {
      String score = switch (kind) {
        case CODE -> "code ";
        case REFINED -> "refined cosine ";
        case EUCLIDEAN -> "refined euclidean ";
      };
      return score + (statistic == Statistic.MEAN ? "mean distance" : "k-th distance");
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
      throw new BadInputException("`score` " + asked.label() + ": the calibration stored in " + reader.dir() + " uses the " + s.kind().label()
          + " score; run 'actindex ood calibrate `score` " + asked.label() + "' first, or drop `score`");
    return new OodScorer(reader, cal.k(), cal.statistic(), cal.layers(), s.kind(), s.candidates());
  }

  /** Refuses a refined or euclidean calibration where only the code score applies ({@code what}: the option or command). */
  public static void requireCode(IndexReader reader, String what) {
    OodScorer.Kind kind = scoring(reader).kind();
    if (kind != OodScorer.Kind.CODE)
      throw new BadInputException(what + " uses the code score, but the calibration stored in " + reader.dir()
          + " uses the " + kind.label() + " score; calibrate with `score` code for it");
  }

  /**
   * Which examples were live: their count and a 64-bit fingerprint of their ids ({@code count < 0}:
   * not recorded, a calibration written before the record). Ids are never renumbered or reused
   * ({@code compact} keeps them), so the same live set means the same codes and kept magnitudes,
   * hence the same scores; an {@code add} or {@code delete} changes it (an add whose examples are
   * all deleted again restores it, and so do the scores).
   */
  public record LiveSet(int count, long fingerprint) {
    public static final LiveSet UNRECORDED = new LiveSet(-1, 0);

    /** The live set of {@code reader}'s index now. The fingerprint: h = 0, then for every live id ascending h = mix(h + id + 1). */
    public static LiveSet of(IndexReader reader) {
      long[] h = {0};
      reader.forEachLive(id -> h[0] = mix(h[0] + id + 1));
      return new LiveSet(reader.liveCount(), h[0]);
    }

    /** SplitMix64's finaliser: every input bit moves every output bit. */
    private static long mix(long z) {
      z = (z ^ (z >>> 30)) * 0xbf58476d1ce4e5b9L;
      z = (z ^ (z >>> 27)) * 0x94d049bb133111ebL;
      return z ^ (z >>> 31);
    }

    public boolean recorded() {
      return count >= 0;
    }
  }

  /** How the live set now stands against the one the stored calibration recorded. */
  public enum Standing { SAME, CHANGED, UNRECORDED }

  /**
   * The stored calibration's live set against the index's now; {@code message} is null when they
   * are the same, else one sentence to show (a warning when changed, a note when not recorded).
   */
  public record LiveCheck(Standing standing, LiveSet then, LiveSet now, String message) {}

  /**
   * Compares the live set the stored calibration recorded with the index's now (refused when there
   * is no calibration or it is damaged). Never refuses a change: the user may keep the calibration
   * knowingly; the caller shows the message. {@link OodScore#run}, {@link OodScore#decide}, {@link
   * OodEval#run}, {@link EdgeExport#run} and {@link Report#run} make this check and return it.
   */
  public static LiveCheck liveCheck(IndexReader reader) {
    double tpr = load(reader).tpr(); // refuses a missing or damaged calibration, the record included
    LiveSet then = liveSet(fields(new String(reader.attachment(ATTACHMENT), StandardCharsets.UTF_8)), reader.dir() + " attachment " + ATTACHMENT);
    LiveSet now = LiveSet.of(reader);
    if (!then.recorded())
      return new LiveCheck(Standing.UNRECORDED, then, now, "the OOD calibration stored in " + reader.dir() + " does not record which examples"
          + " were live (it was written by an older actindex), so a change of the index since cannot be detected; run 'actindex ood calibrate'"
          + " again to record it");
    if (then.equals(now)) return new LiveCheck(Standing.SAME, then, now, null);
    String share = new BigDecimal(Double.toString(1 - tpr)).movePointRight(2).round(new MathContext(3)).stripTrailingZeros().toPlainString();
    return new LiveCheck(Standing.CHANGED, then, now, "the index " + reader.dir() + " changed since 'ood calibrate' (" + then.count()
        + " live examples then, " + now.count() + (then.count() == now.count() ? " now, not the same ones" : " now")
        + "): the stored threshold may no longer flag about " + share + "% of in-distribution inputs; it is used as it is; run"
        + " 'actindex ood calibrate' again to fit it to the index now");
  }

  /** The recorded live set of the fields {@code kv} ({@link LiveSet#UNRECORDED} when neither field is there); a damaged record is refused. */
  private static LiveSet liveSet(Map<String, String> kv, String source) {
    try {
      if (!kv.containsKey("live") && !kv.containsKey("live_ids")) return LiveSet.UNRECORDED;
      int count = intField(kv, "live");
      if (count < 0) throw new IllegalArgumentException("field live: " + count + " is below 0");
      String hex = field(kv, "live_ids");
      if (!hex.matches("[0-9a-f]{16}"))
        throw new IllegalArgumentException("field live_ids: " + BadInputException.quote(hex) + " is not 16 hex digits");
      return new LiveSet(count, Long.parseUnsignedLong(hex, 16));
    } catch (IllegalArgumentException e) {
      throw new BadInputException(source + ": damaged calibration: " + e.getMessage(), e);
    }
  }

  static byte[] toBytes(Calibration c, Scoring scoring, LiveSet live) {
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
    s.append('\n');
    if (live.recorded()) s.append("live=").append(live.count()).append('\n').append("live_ids=").append(String.format("%016x", live.fingerprint())).append('\n');
    return s.toString().getBytes(StandardCharsets.UTF_8);
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
      liveSet(kv, source); // refuses a damaged record here, so every reader of the calibration does
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
    checkEnough(sorted.length, tpr, what, RowRange.ALL);
    return sorted[(int) rank(tpr, sorted.length) - 1];
  }

  /**
   * Refuses {@code n} calibration inputs of {@code what} when {@code tpr} needs more, naming the
   * {@code rows} selected when they are not all of the file (too few of them is then the likely cause).
   */
  public static void checkEnough(long n, double tpr, String what, RowRange rows) {
    long need = minimum(tpr);
    if (n >= need) return;
    boolean part = rows != null && !rows.equals(RowRange.ALL);
    throw new BadInputException(what + ": " + (part ? "`rows` " + rows + " selects " : "") + n + (n == 1 ? " calibration input" : " calibration inputs")
        + "; a target rate (`tpr`) of " + tpr + " needs at least " + need + (part ? ": select more rows, or leave `rows` out for the whole file" : ""));
  }
}
