package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.index.store.IndexReader;
import java.util.List;
import java.util.Locale;

/**
 * The out-of-distribution score of codes against the live examples of an index: the Hamming
 * distance to the k-th nearest example, or the mean of the k nearest (Sun, Ming, Zhu &amp; Li,
 * "Out-of-Distribution Detection with Deep Nearest Neighbors", ICML 2022, on codes), counted on
 * chosen layers. Exact: the index's k-NN search. Higher = further from the training data.
 *
 * <p>{@link Kind#REFINED}: when the index keeps magnitudes, the score is instead the cosine
 * distance ({@link Refine.Metric#COSINE}) from the query's activations to the k-th nearest (or the
 * mean of the k nearest) dequantised magnitude vectors among the {@code candidates} nearest codes
 * (ties at the last Hamming distance included, {@link Refine#candidates}): exact within the
 * candidates, never looking at the rest. {@link Kind#EUCLIDEAN}: the same with the Euclidean distance
 * ({@link Refine.Metric#EUCLIDEAN}), which, unlike the cosine, grows with the activations' size (an
 * input scaled far outside the training range scores high; docs/commands/ood.md, far inputs).
 */
public final class OodScorer {
  /**
   * One code's score: {@code value} (the chosen statistic), the k-th distance, the mean of the k
   * nearest, whether the code's own region holds a training example (distance 0), and the nearest
   * examples found (ids and Hamming distances, best first: by Hamming distance for the code score,
   * by refined distance for the refined one).
   */
  public record Score(double value, int kth, double mean, boolean ownRegion, int[] ids, int[] distances) {}

  /**
   * Which score: Hamming distances on codes, or float distances on kept magnitudes among the Hamming
   * candidates, cosine (REFINED) or Euclidean (EUCLIDEAN).
   */
  public enum Kind {
    CODE(null), REFINED(Refine.Metric.COSINE), EUCLIDEAN(Refine.Metric.EUCLIDEAN);

    private final Refine.Metric metric;

    Kind(Refine.Metric metric) {
      this.metric = metric;
    }

    public static Kind parse(String s) {
      for (Kind x : values()) if (x.label().equalsIgnoreCase(s)) return x;
      throw new BadParameterException("score", ": unknown score '" + (s.length() > 20 ? s.substring(0, 20) + "..." : s) + "' (code, refined or euclidean)");
    }

    public String label() {
      return name().toLowerCase(Locale.ROOT);
    }

    /** The float distance on kept magnitudes; null for the code score. */
    public Refine.Metric metric() {
      return metric;
    }

    /** Whether the score re-ranks Hamming candidates by kept magnitudes (REFINED, EUCLIDEAN). */
    public boolean usesMagnitudes() {
      return metric != null;
    }

    /**
     * EUCLIDEAN when the index keeps magnitudes (it sees inputs far outside the training range, which
     * the cosine and the codes cannot; docs/commands/ood.md, far inputs), CODE otherwise.
     */
    public static Kind defaultFor(IndexReader reader) {
      return reader.hasMagnitudes() ? EUCLIDEAN : CODE;
    }
  }

  private final IndexReader reader;
  private final int k;
  private final Statistic statistic;
  private final long[] mask;
  private final Kind kind;
  private final int candidates;
  private final int[] units;

  /** The code score; {@code layers} null or empty = all layers; k larger than the live examples is refused. */
  public OodScorer(IndexReader reader, int k, Statistic statistic, List<String> layers) {
    this(reader, k, statistic, layers, Kind.CODE, 0);
  }

  /**
   * The {@code kind} score; REFINED and EUCLIDEAN re-rank {@code max(candidates, k)} Hamming
   * candidates and need an index that keeps magnitudes (refused otherwise).
   */
  public OodScorer(IndexReader reader, int k, Statistic statistic, List<String> layers, Kind kind, int candidates) {
    this.reader = reader;
    this.k = k;
    this.statistic = statistic;
    this.mask = Layers.maskOrNull(reader.layout(), layers);
    this.kind = kind;
    this.candidates = Math.max(candidates, k);
    checkK(reader, k);
    if (kind.usesMagnitudes() && !reader.hasMagnitudes()) throw new BadInputException(Refine.noMagnitudes(reader));
    this.units = layers == null || layers.isEmpty() ? null : Refine.units(reader.layout(), Layers.select(reader.layout(), layers));
  }

  public Kind kind() {
    return kind;
  }

  /** Refuses {@code k < 1} and {@code k} above the index's live examples (none: every example deleted). */
  public static void checkK(IndexReader reader, int k) {
    if (k < 1) throw new BadParameterException("k", " must be at least 1, got " + k);
    if (reader.liveCount() == 0)
      throw new BadInputException("the index " + reader.dir() + " holds no live examples; an OOD score needs at least k = " + k + " of them");
    if (k > reader.liveCount())
      throw new BadParameterException("k", " " + k + " is larger than the index " + reader.dir() + ", which holds " + reader.liveCount() + " live examples");
  }

  public Score score(long[] code) {
    return of(reader.search(code, k, null, mask), k, statistic);
  }

  /**
   * The refined score (cosine, or Euclidean for EUCLIDEAN) of one query: its code and its activations ({@code acts[off..off+bits)}).
   * {@code kth} and {@code mean} stay the Hamming distances of the k nearest codes; {@code value} is
   * the refined statistic; {@code nearest} lists the k best candidates in refined order with their
   * Hamming distances.
   */
  public Score refined(long[] code, float[] acts, int off) {
    Hits cands = Refine.candidates(reader, code, candidates, null, mask);
    int d = reader.layout().bits();
    float[] query = java.util.Arrays.copyOfRange(acts, off, off + d);
    Refine.Ranked r = Refine.rerank(cands, query, (id, v) -> reader.magnitudes(id, v, 0), new float[d], kind == Kind.CODE ? Refine.Metric.COSINE : kind.metric(), units, k);
    double sum = 0;
    for (int i = 0; i < k; i++) sum += r.distance()[i];
    Score hamming = of(cands, k, statistic);
    double value = statistic == Statistic.MEAN ? sum / k : r.distance()[k - 1];
    return new Score(value, hamming.kth(), hamming.mean(), hamming.ownRegion(), r.ids(), r.hamming());
  }

  /** The score of query {@code i}: refined (cosine or Euclidean) when this scorer is, from {@code acts} (null for the code score). */
  public Score score(QueryCodes q, float[] acts, int i) {
    return kind.usesMagnitudes() ? refined(q.codes().code(i), acts, i * reader.layout().bits()) : score(q.codes().code(i));
  }

  /** The scores of every code of {@code codes} ({@code progress} null: none). */
  public double[] values(CodeBlock codes, Progress progress) {
    Progress prog = progress == null ? Progress.NONE : progress;
    double[] out = new double[codes.size()];
    for (int i = 0; i < out.length; i++) {
      out[i] = score(codes.code(i)).value();
      prog.update(i + 1, out.length);
    }
    return out;
  }

  /** The scores of every query of {@code q} (activations for the refined score). */
  public double[] values(QuerySource.Queries q, Progress progress) {
    return values(q, progress, 1);
  }

  /**
   * As {@link #values(QuerySource.Queries, Progress)} on {@code threads} threads: each query is
   * scored on its own (the index is a thread-safe snapshot), so the result is the same for any
   * thread count.
   */
  public double[] values(QuerySource.Queries q, Progress progress, int threads) {
    double[] out = new double[q.codes().size()];
    Parallel.forEach(out.length, threads, progress, i -> out[i] = score(q.codes(), q.activations(), i).value());
    return out;
  }

  /** The queries this scorer needs: with activations for the refined and euclidean scores (a codes source is refused), codes otherwise. */
  public QuerySource.Queries load(Source source, RowRange rows) {
    if (kind.usesMagnitudes()) {
      if (source.kind() == Source.Kind.CODES)
        throw new BadInputException(source.file() + ": the " + kind.label() + " score needs the queries' activations (`Source.activations`) or inputs (`Source.inputs`), "
            + "not codes; use `score` code for codes");
      return QuerySource.loadWithActivations(reader, source, rows, Progress.NONE);
    }
    return new QuerySource.Queries(QuerySource.load(reader, source, rows), null);
  }

  /** The score from the {@code >= k} nearest hits of a code (a k-NN answer for any larger k works too). */
  public static Score of(Hits nearest, int k, Statistic statistic) {
    if (nearest.size() < k) throw new IllegalArgumentException(nearest.size() + " hits for k " + k);
    long sum = 0;
    for (int i = 0; i < k; i++) sum += nearest.dist(i);
    int kth = nearest.dist(k - 1);
    double mean = sum / (double) k;
    return new Score(statistic == Statistic.MEAN ? mean : kth, kth, mean, nearest.size() > 0 && nearest.dist(0) == 0, nearest.ords(), nearest.dists());
  }
}
