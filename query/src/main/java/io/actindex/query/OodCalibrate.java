package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.edge.EdgeBundle.Calibration;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
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
   * the index's own rows; {@code score} (null = refined when the index keeps magnitudes, else code)
   * and the Hamming candidates the refined score re-ranks (0 = {@link Refine#DEFAULT_CANDIDATES}; another
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
      if (threads < 1) throw new BadInputException("threads must be at least 1, got " + threads);
      if (candidates < 0) throw new BadInputException("--candidates must be at least 1, got " + candidates);
      if (!(tpr > 0 && tpr < 1)) throw new BadInputException("--tpr must lie strictly between 0 and 1, got " + tpr);
      if (statistic == null) statistic = Statistic.KTH;
      layers = layers == null ? List.of() : List.copyOf(layers);
    }
  }

  /** The stored calibration and a summary of the scores (nearest-rank quantiles). */
  public record Result(Calibration calibration, OodCalibration.Scoring scoring, int inputs, double min, double p50, double p90, double p95, double p99, double max,
      double mean) {}

  public static Result run(Path dir, Source source, RowRange rows, Params p, Progress progress) {
    Calibration cal;
    OodCalibration.Scoring scoring;
    try (IndexReader reader = IndexReader.open(dir)) {
      OodScorer.checkK(reader, p.k());
      Layers.select(reader.layout(), p.layers());
      OodScorer.Kind kind = p.score() != null ? p.score() : OodScorer.Kind.defaultFor(reader);
      if (kind == OodScorer.Kind.CODE && p.candidates() != 0)
        throw new BadInputException("--candidates is for the refined score; this calibration uses the code score"
            + (p.score() == null ? " (the index " + dir + " keeps no magnitudes)" : ""));
      int cands = kind == OodScorer.Kind.CODE ? 0 : Math.max(p.candidates() == 0 ? Refine.DEFAULT_CANDIDATES : p.candidates(), p.k());
      OodScorer scorer = new OodScorer(reader, p.k(), p.statistic(), p.layers(), kind, cands);
      QuerySource.Queries qa = scorer.load(source, rows);
      if (p.checkOverlap()) checkOverlap(reader, qa.codes(), source.file().toString());
      double[] scores = scorer.values(qa, progress, p.threads());
      scoring = kind == OodScorer.Kind.CODE ? OodCalibration.Scoring.CODE : new OodCalibration.Scoring(kind, cands);
      Arrays.sort(scores);
      double threshold = OodCalibration.threshold(scores, p.tpr(), source.file().toString());
      cal = new Calibration(p.k(), p.statistic(), p.layers(), p.tpr(), threshold, scores);
    }
    try (IndexWriter w = IndexWriter.open(dir)) {
      w.putAttachment(OodCalibration.ATTACHMENT, OodCalibration.toBytes(cal, scoring));
    }
    return summary(cal, scoring);
  }

  /** The summary {@code ood calibrate} prints, of a stored calibration (the report shows the same numbers). */
  public static Result summary(Calibration cal, OodCalibration.Scoring scoring) {
    double[] s = cal.scores();
    double sum = 0;
    for (double v : s) sum += v;
    return new Result(cal, scoring, s.length, s[0], nearestRank(s, 0.5), nearestRank(s, 0.9), nearestRank(s, 0.95), nearestRank(s, 0.99),
        s[s.length - 1], sum / s.length);
  }

  /** Nearest-rank quantile of ascending values. */
  static double nearestRank(double[] sorted, double q) {
    return sorted[Math.max(0, (int) Math.ceil(q * sorted.length - 1e-9) - 1)];
  }

  /**
   * Refuses calibration rows that look like the index's own training rows: when at least half of
   * the rows have exactly the code of the live example with the same id (row i vs id i), the file is
   * most likely (part of) the training file, and its scores would be optimistically low.
   */
  static void checkOverlap(IndexReader reader, QueryCodes q, String file) {
    CodeBlock codes = q.codes();
    int same = 0, compared = 0;
    for (int i = 0; i < codes.size(); i++) {
      long id = q.row(i);
      if (id >= reader.maxId() || !reader.isLive((int) id)) continue;
      compared++;
      if (Arrays.equals(codes.code(i), reader.code((int) id))) same++;
    }
    if (compared > 0 && 2L * same >= compared)
      throw new BadInputException(file + ": " + same + " of " + compared + " rows have exactly the code of the index example with the same id; "
          + "these look like training rows (calibrate with held-out inputs the index does not hold)");
  }
}
