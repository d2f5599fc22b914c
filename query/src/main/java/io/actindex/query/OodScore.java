package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.edge.EdgeBundle;
import io.actindex.edge.EdgeBundle.Calibration;
import io.actindex.index.store.IndexReader;
import java.util.ArrayList;
import java.util.List;

/**
 * {@code ood score}: per input, the calibrated score, the stored threshold, the decision ({@code
 * out} when the score is above the threshold), the conformal p-value {@code (1 + #{calibration
 * scores >= s}) / (n + 1)} (Vovk, Gammerman &amp; Shafer 2005), whether the input's own region is
 * populated, the nearest training examples as evidence, and, when the inputs are raw inputs and
 * the index holds the model, the model's maximum softmax probability beside it (a separate
 * baseline, never mixed into the score). {@link #decide} is the decision-only path.
 *
 * <pre>{@code
 * try (IndexReader r = IndexReader.open(dir)) {
 *   OodScore.Output o = OodScore.run(r, Source.inputs(Path.of("new.npy"), null), RowRange.ALL, new OodScore.Params(3), Progress.NONE);
 *   for (OodScore.Result x : o.results()) if (x.out()) System.out.println(x.row() + " p=" + x.pValue());
 *   if (o.liveCheck().message() != null) System.err.println(o.liveCheck().message()); // e.g. the index changed since calibrating
 * }
 * }</pre>
 */
public final class OodScore {
  private OodScore() {}

  /**
   * {@code evidence}: how many nearest examples to name per input (0 = none, at most k); {@code
   * score}: the score asked for (null = the calibration's; a different one is refused); {@code
   * threads >= 1}: inputs scored in parallel (the results are the same for any count).
   */
  public record Params(int evidence, OodScorer.Kind score, int threads) {
    public Params {
      if (evidence < 0) throw new BadParameterException("evidence", " must be at least 0, got " + evidence);
      Parallel.checkThreads(threads);
    }

    public Params(int evidence, OodScorer.Kind score) {
      this(evidence, score, 1);
    }

    public Params(int evidence) {
      this(evidence, null, 1);
    }
  }

  /** One nearest training example: id, key and distance on the calibrated layers. */
  public record Evidence(int id, String key, int distance) {}

  /**
   * One input: its file row, score, k-th distance, mean of the k nearest, own region populated,
   * decision, p-value, evidence, and {@code maxSoftmax} (null when the baseline does not apply).
   */
  public record Result(long row, double score, int kth, double mean, boolean ownRegion, boolean out, double pValue, List<Evidence> evidence,
      Double maxSoftmax) {}

  /**
   * The calibration in force, one result per input, which score the calibration uses, how the
   * input file was read ({@link QueryCodes#notes()}, e.g. its CSV header), and whether the index's
   * live examples changed since the calibration ({@link OodCalibration#liveCheck}: when they did, the
   * threshold may no longer flag the share it was set for; its message says so).
   */
  public record Output(Calibration calibration, List<Result> results, OodCalibration.Scoring scoring, List<String> notes,
      OodCalibration.LiveCheck liveCheck) {
    /** The score in force by name ({@link OodCalibration.Scoring#name}), e.g. {@code code k-th distance}. */
    public String scoreName() {
      return scoring.name(calibration.statistic());
    }
  }

  public static Output run(IndexReader reader, Source source, RowRange rows, Params p, Progress progress) {
    Calibration cal = OodCalibration.load(reader);
    OodScorer scorer = OodCalibration.scorer(reader, cal, p.score());
    QuerySource.Queries qa = scorer.load(source, rows);
    QueryCodes q = qa.codes();
    double[] msp = SoftmaxBaseline.scores(reader, source, rows);
    double[] sorted = cal.scores();
    Result[] out = new Result[q.size()];
    Parallel.forEach(out.length, p.threads(), progress, i -> {
      OodScorer.Score s = scorer.score(q, qa.activations(), i);
      List<Evidence> ev = new ArrayList<>();
      for (int e = 0; e < Math.min(p.evidence(), s.ids().length); e++)
        ev.add(new Evidence(s.ids()[e], reader.meta().document(s.ids()[e]).get("key"), s.distances()[e]));
      out[i] = new Result(q.row(i), s.value(), s.kth(), s.mean(), s.ownRegion(), s.value() > cal.threshold(),
          EdgeBundle.pValue(sorted, s.value()), List.copyOf(ev), msp == null ? null : 1 - msp[i]);
    });
    return new Output(cal, List.of(out), OodCalibration.scoring(reader), q.notes(), OodCalibration.liveCheck(reader));
  }

  /**
   * The decisions, per query code ({@code out[i]} true = out), and whether the index's live
   * examples changed since the calibration (as {@link Output#liveCheck}).
   */
  public record Decisions(boolean[] out, OodCalibration.LiveCheck liveCheck) {}

  /**
   * Decision only, per query code. Uses the index's unique codes, most shared first, and stops at
   * the first {@code k} training examples within the threshold ({@link EdgeBundle#isOut}); the same
   * answer as {@code score > threshold}.
   */
  public static Decisions decide(IndexReader reader, QueryCodes q) {
    return decide(reader, q, 1);
  }

  /** As {@link #decide(IndexReader, QueryCodes)}, queries on {@code threads} threads. */
  public static Decisions decide(IndexReader reader, QueryCodes q, int threads) {
    OodCalibration.requireCode(reader, "`OodScore.decide`");
    EdgeBundle b = EdgeExport.bundle(reader, OodCalibration.load(reader), false);
    boolean[] out = new boolean[q.size()];
    Parallel.forEach(out.length, threads, Progress.NONE, i -> out[i] = b.isOut(q.codes().code(i)));
    return new Decisions(out, OodCalibration.liveCheck(reader));
  }
}
