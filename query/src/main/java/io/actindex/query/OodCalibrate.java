package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import io.actindex.edge.EdgeBundle.Calibration;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * {@code ood calibrate}: scores held-out in-distribution inputs (not in the index) against the
 * index, and stores the sorted scores, k, statistic, layers and the threshold that accepts the
 * target share {@code tpr} of in-distribution inputs (see {@link OodCalibration}) in the index, as
 * one atomic commit (one attachment). Nothing is written when anything is refused.
 *
 * <pre>{@code
 * OodCalibrate.Result r = OodCalibrate.run(Path.of("idx"), Source.inputs(Path.of("heldout.npy"), null), RowRange.ALL,
 *     new OodCalibrate.Params(5, Statistic.KTH, 0.95, null, false), Progress.NONE);
 * }</pre>
 */
public final class OodCalibrate {
  private OodCalibrate() {}

  /**
   * {@code k} nearest, the statistic, the target true-positive rate (share of in-distribution inputs
   * accepted), the layers counted (null/empty = all), and whether to refuse inputs that look like
   * the index's own rows; {@code score} (null = euclidean when the index keeps magnitudes, else code)
   * and the Hamming candidates the refined and euclidean scores re-rank (0 = {@link Refine#DEFAULT_CANDIDATES}; another
   * count with the code score is refused);
   * {@code threads >= 1}: inputs scored in parallel (the same calibration for any count).
   */
  public record Params(int k, Statistic statistic, double tpr, List<String> layers, boolean checkOverlap, OodScorer.Kind score, int candidates,
      int threads) {
    public Params(int k, Statistic statistic, double tpr, List<String> layers, boolean checkOverlap) {
      this(k, statistic, tpr, layers, checkOverlap, null, 0, 1);
    }

    public Params(int k, Statistic statistic, double tpr, List<String> layers, boolean checkOverlap, OodScorer.Kind score, int candidates) {
      this(k, statistic, tpr, layers, checkOverlap, score, candidates, 1);
    }

    public Params {
      Parallel.checkThreads(threads);
      if (candidates < 0) throw new BadParameterException("candidates", " must be at least 1 (or 0 for the default, " + Refine.DEFAULT_CANDIDATES + "), got " + candidates);
      if (!(tpr > 0 && tpr < 1)) throw new BadParameterException("tpr", " must lie strictly between 0 and 1, got " + tpr);
      if (statistic == null) statistic = Statistic.KTH;
      layers = layers == null ? List.of() : List.copyOf(layers);
    }
  }

  /**
   * The stored calibration, a summary of the scores (nearest-rank quantiles) and warnings about
   * the calibration inputs (a threshold of 0, inputs that look like the training file); {@code
   * notes}: how the input file was read ({@link QueryCodes#notes()}, e.g. its CSV header).
   */
  public record Result(Calibration calibration, OodCalibration.Scoring scoring, int inputs, double min, double p50, double p90, double p95, double p99, double max,
      double mean, List<String> warnings, List<String> notes) {
    public Result {
      warnings = List.copyOf(warnings);
      notes = List.copyOf(notes);
    }
  }

  public static Result run(Path dir, Source source, RowRange rows, Params p, Progress progress) {
    Calibration cal;
    OodCalibration.Scoring scoring;
    OodCalibration.LiveSet live; // the examples scored against, recorded so that a later change of them is told
    List<String> warnings = new ArrayList<>(), notes;
    try (IndexReader reader = IndexReader.open(dir)) {
      OodScorer.checkK(reader, p.k());
      Layers.select(reader.layout(), p.layers());
      OodScorer.Kind kind = p.score() != null ? p.score() : OodScorer.Kind.defaultFor(reader);
      if (kind == OodScorer.Kind.CODE && p.candidates() != 0)
        throw new BadParameterException("candidates", " is for the refined and euclidean scores; this calibration uses the code score"
            + (p.score() == null ? " (the index " + dir + " keeps no magnitudes)" : ""));
      int cands = kind == OodScorer.Kind.CODE ? 0 : Math.max(p.candidates() == 0 ? Refine.DEFAULT_CANDIDATES : p.candidates(), p.k());
      OodScorer scorer = new OodScorer(reader, p.k(), p.statistic(), p.layers(), kind, cands);
      QuerySource.Queries qa = scorer.load(source, rows);
      notes = qa.codes().notes();
      String file = source.file().toString();
      long[] far = qa.farRows();
      if (far.length > 0) // a calibration score must be finite: the threshold and the p-values come from them
        throw new BadInputException(file + ": row " + far[0] + " (0-based) has activations beyond float32's range (about 3.4e38), which score"
            + " as infinitely far" + (far.length > 1 ? " (" + far.length + " such rows)" : "") + "; calibrate on held-out in-distribution rows:"
            + " leave it out or scale the " + (source.kind() == Source.Kind.INPUTS ? "inputs" : "activations"));
      OodCalibration.checkEnough(qa.codes().codes().size(), p.tpr(), file, rows); // before the scoring, which may take long
      String found = trainingRows(reader, qa);
      boolean looksLikeTraining = found != null;
      if (looksLikeTraining && p.checkOverlap())
        throw new BadInputException(file + ": " + found + "; these look like training rows (calibrate with held-out inputs the index does not hold)");
      if (looksLikeTraining)
        warnings.add(file + ": " + found + ", as rows of the training file would; their scores are optimistically low and the threshold flags too much "
            + "(calibrate with held-out inputs the index does not hold; `checkOverlap` refuses such a file)");
      double[] scores = scorer.values(qa, progress, p.threads());
      scoring = kind == OodScorer.Kind.CODE ? OodCalibration.Scoring.CODE : new OodCalibration.Scoring(kind, cands);
      Arrays.sort(scores);
      double threshold = OodCalibration.threshold(scores, p.tpr(), source.file().toString());
      cal = new Calibration(p.k(), p.statistic(), p.layers(), p.tpr(), threshold, scores);
      live = OodCalibration.LiveSet.of(reader);
      if (threshold == 0 && !looksLikeTraining) {
        int zeros = 0;
        while (zeros < scores.length && scores[zeros] == 0) zeros++;
        warnings.add("the threshold is 0: " + zeros + " of " + scores.length + " calibration inputs score 0 (their " + p.k()
            + " nearest indexed examples are at distance 0), so every later input that is not such a copy is flagged out; "
            + "if these inputs are (copies of) indexed examples, calibrate with held-out inputs the index does not hold");
      }
    }
    try (IndexWriter w = IndexWriter.open(dir)) {
      w.putAttachment(OodCalibration.ATTACHMENT, OodCalibration.toBytes(cal, scoring, live));
    }
    Result r = summary(cal, scoring);
    return new Result(cal, scoring, r.inputs(), r.min(), r.p50(), r.p90(), r.p95(), r.p99(), r.max(), r.mean(), warnings, notes);
  }

  /**
   * What makes the rows of {@code qa} look like (part of) the training file, or null when they do
   * not: at least half of them have exactly the code of the live example with the same id ({@link
   * #overlap}); else, with activations and kept magnitudes, at least half are copies of indexed
   * examples ({@link #copies}); else nearly all land on an indexed code, far more often than indexed
   * examples share one ({@link #sharedCodes}). Their k-NN scores are then optimistically low.
   */
  static String trainingRows(IndexReader reader, QuerySource.Queries qa) {
    int[] overlap = overlap(reader, qa.codes());
    if (overlap[1] > 0 && 2L * overlap[0] >= overlap[1])
      return overlap[0] + " of " + overlap[1] + " rows have exactly the code of the index example with the same id";
    int rowCount = qa.codes().codes().size();
    if (qa.activations() != null && reader.hasMagnitudes()) {
      // training rows in another order, or a part of them saved to a file of its own
      int copies = copies(reader, qa);
      return rowCount > 0 && 2L * copies >= rowCount
          ? copies + " of " + rowCount + " rows are copies of indexed examples (the same code, and activations within the rounding of the kept magnitudes)"
          : null;
    }
    // no activations to compare: training rows in another order still all land on an indexed code
    int[] shared = sharedCodes(reader, qa.codes().codes());
    return farAbove(shared)
        ? shared[0] + " of " + shared[1] + " rows have exactly the code of an indexed example, while " + shared[2] + " of "
            + shared[3] + " indexed examples drawn at random share their code with another (about how often rows the index does not hold"
            + " land on an indexed code)"
        : null;
  }

  /** The summary {@code ood calibrate} prints, of a stored calibration (the report shows the same numbers). */
  public static Result summary(Calibration cal, OodCalibration.Scoring scoring) {
    double[] s = cal.scores();
    double sum = 0;
    for (double v : s) sum += v;
    return new Result(cal, scoring, s.length, s[0], nearestRank(s, 0.5), nearestRank(s, 0.9), nearestRank(s, 0.95), nearestRank(s, 0.99),
        s[s.length - 1], sum / s.length, List.of(), List.of());
  }

  /** Nearest-rank quantile of ascending values. */
  static double nearestRank(double[] sorted, double q) {
    return sorted[Math.max(0, (int) Math.ceil(q * sorted.length - 1e-9) - 1)];
  }

  /**
   * How many query rows are copies of a live example: the same code, and each activation within one
   * rounding step of that example's kept magnitude (two half steps: a compaction may have rounded
   * the kept value twice). Held-out rows that share an example's region differ from it by far more
   * than the 8-bit rounding, so this finds training rows in any order, which {@link #overlap}
   * (row i against id i) does not.
   */
  static int copies(IndexReader reader, QuerySource.Queries q) {
    int bits = reader.layout().bits();
    float[] kept = new float[bits], err = new float[bits], acts = q.activations();
    CodeBlock codes = q.codes().codes();
    int copies = 0;
    for (int i = 0; i < codes.size(); i++) {
      Hits same = reader.searchRadius(codes.code(i), 0, null, null);
      boolean copy = false;
      for (int h = 0; h < same.size() && !copy; h++) {
        int id = same.ord(h);
        if (!reader.magnitudes(id, kept, 0) || !reader.magnitudeErrors(id, err, 0)) continue;
        copy = true;
        for (int j = 0; j < bits && copy; j++) {
          float a = acts[i * bits + j];
          copy = Math.abs(a - kept[j]) <= 2 * err[j] + 1e-6f * Math.max(1f, Math.abs(a));
        }
      }
      if (copy) copies++;
    }
    return copies;
  }

  /** Live examples {@link #sharedCodes} draws (all of them when there are no more). */
  static final int BASELINE = 2000;

  /**
   * Training rows in any order when no activations can be compared ({@link #copies}): {@code [0]} of
   * the {@code [1]} query rows have exactly the code of some live example; {@code [2]} of {@code [3]}
   * live examples (at most {@link #BASELINE}, drawn at random with a fixed seed) share their code
   * with another live one. A row the index does not hold lands on an indexed code about as often as
   * an indexed example's code is shared by another (leave one out); a training row always does.
   */
  static int[] sharedCodes(IndexReader reader, CodeBlock codes) {
    int onIndexed = 0;
    for (int i = 0; i < codes.size(); i++) if (reader.searchRadius(codes.code(i), 0, null, null).size() > 0) onIndexed++;
    int[] drawn = new int[Math.min(BASELINE, reader.liveCount())];
    java.util.SplittableRandom rnd = new java.util.SplittableRandom(0x0C0DE5L);
    int seen = 0;
    for (int id = 0; id < reader.maxId(); id++) { // reservoir sample of the live ids
      if (!reader.isLive(id)) continue;
      int at = seen < drawn.length ? seen : rnd.nextInt(seen + 1);
      if (at < drawn.length) drawn[at] = id;
      seen++;
    }
    int shared = 0;
    for (int id : drawn) if (reader.searchRadius(reader.code(id), 0, null, null).size() > 1) shared++;
    return new int[] {onIndexed, codes.size(), shared, drawn.length};
  }

  /**
   * Whether {@link #sharedCodes}' rows look like training rows: at least 99% of them on an indexed
   * code, and that share more than 4 standard errors above the drawn examples' (two-proportion z
   * test with the pooled share, common practice; 4 keeps honest held-out rows, whose share is the
   * drawn one's up to sampling, from a false alarm). When most indexed codes are shared (few
   * regions), held-out rows land on them too and nothing can be told apart: no warning.
   */
  static boolean farAbove(int[] s) {
    if (s[1] == 0 || s[3] == 0 || 100L * s[0] < 99L * s[1]) return false;
    double p1 = (double) s[0] / s[1], p2 = (double) s[2] / s[3], p = (double) (s[0] + s[2]) / (s[1] + s[3]);
    double se = Math.sqrt(p * (1 - p) * (1.0 / s[1] + 1.0 / s[3]));
    return se > 0 && (p1 - p2) / se > 4;
  }

  /**
   * How many calibration rows have exactly the code of the live example with the same id (row i vs
   * id i), and of how many rows that have such an example: when it is at least half, the file is
   * most likely (part of) the training file, and its scores would be optimistically low (refused
   * with {@code checkOverlap}, else a warning).
   */
  static int[] overlap(IndexReader reader, QueryCodes q) {
    CodeBlock codes = q.codes();
    int same = 0, compared = 0;
    for (int i = 0; i < codes.size(); i++) {
      long id = q.row(i);
      if (id >= reader.maxId() || !reader.isLive((int) id)) continue;
      compared++;
      if (Arrays.equals(codes.code(i), reader.code((int) id))) same++;
    }
    return new int[] {same, compared};
  }
}
