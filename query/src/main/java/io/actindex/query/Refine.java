package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeLayout;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.index.meta.Where;
import io.actindex.index.store.IndexReader;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;

/**
 * Nearest examples by Hamming distance, re-ranked by the kept magnitudes: an exact Hamming search
 * takes the {@code candidates} nearest live examples (every example tied with the last one's
 * distance included, so the set does not depend on how ties are broken), then orders them by
 * cosine or Euclidean distance between the query's activations and each candidate's dequantised
 * magnitudes (ties by Hamming distance, then id) and keeps the first {@code k}. The order is a
 * re-ranking of the Hamming candidates, not a float search of the whole index: an example outside
 * the candidates is never returned. A query row whose activations do not fit float32 ({@link
 * QuerySource.Queries#farRows}) is at distance +Infinity from every candidate, so its candidates
 * stay in Hamming order (then id).
 *
 * <pre>{@code
 * try (IndexReader r = IndexReader.open(dir)) {
 *   QuerySource.Queries q = QuerySource.loadWithActivations(r, Source.activations(Path.of("new.npy")), RowRange.ALL, null);
 *   List<Refine.Result> res = Refine.run(r, q, new Refine.Params(5, 100, Refine.Metric.COSINE, null, null, 1), null);
 * }
 * }</pre>
 */
public final class Refine {
  private Refine() {}

  /** Candidates when none are given: {@code max(DEFAULT_CANDIDATES, k)}. */
  public static final int DEFAULT_CANDIDATES = 100;

  /**
   * Distance between float vectors. COSINE: {@code 1 - a.b / (|a| |b|)}, and 1 when either vector
   * is all zeros (a dead ReLU layer has no direction); EUCLIDEAN: {@code sqrt(sum (a-b)^2)}.
   */
  public enum Metric {
    COSINE, EUCLIDEAN;

    public static Metric parse(String s) {
      for (Metric m : values()) if (m.name().equalsIgnoreCase(s)) return m;
      throw new BadInputException("unknown refine metric '" + s + "' (cosine or euclidean)");
    }

    public String label() {
      return name().toLowerCase(Locale.ROOT);
    }
  }

  /**
   * {@code k >= 1} results per query from {@code candidates >= k} Hamming candidates (plus ties);
   * {@code where}, {@code layers} and {@code threads} as in {@link Nearest.Params}; with layers, both
   * distances count those layers' units only.
   */
  public record Params(int k, int candidates, Metric metric, String where, List<String> layers, int threads) {
    public Params {
      if (k < 1) throw new BadParameterException("k", " must be at least 1, got " + k);
      if (candidates < 1) throw new BadParameterException("candidates", " must be at least 1, got " + candidates);
      if (candidates < k) throw new BadParameterException("candidates", " (" + candidates + ") must be at least `k` (" + k + ")");
      Parallel.checkThreads(threads);
      if (metric == null) metric = Metric.COSINE;
      layers = layers == null ? List.of() : List.copyOf(layers);
    }
  }

  /** One result: the neighbour as plain nearest gives it (Hamming distance), and its refined distance. */
  public record Neighbor(Nearest.Neighbor example, double distance) {}

  /**
   * The answer for query row {@code row}: {@code candidates} examples were re-ranked (the Hamming
   * search's nearest, all within {@code hammingRadius}); {@code vote} as in {@link Nearest}.
   */
  public record Result(long row, int candidates, int hammingRadius, List<Neighbor> neighbors, Nearest.Vote vote) {}

  /** Where candidate vectors come from: writes the vector of candidate {@code id} to {@code out[0..]}. */
  public interface Vectors {
    void read(int id, float[] out);
  }

  /** Candidates re-ranked: ids, Hamming distances and refined distances, best first. */
  public record Ranked(int[] ids, int[] hamming, double[] distance) {
    public int size() {
      return ids.length;
    }
  }

  public static List<Result> run(IndexReader reader, QuerySource.Queries queries, Params p, Progress progress) {
    CodeLayout layout = reader.layout();
    if (!reader.hasMagnitudes()) throw new BadInputException(noMagnitudes(reader));
    QueryCodes codes = queries.codes();
    if (!codes.codes().layout().equals(layout))
      throw new BadInputException("query layout " + codes.codes().layout() + " differs from the index layout " + layout);
    if (queries.activations() == null)
      throw new BadInputException("refinement needs the queries' activations (`Source.activations` or `Source.inputs`), not codes");
    int[] shown = Layers.select(layout, p.layers());
    long[] mask = Layers.maskOrNull(layout, p.layers());
    long[][] segMasks = Layers.segmentMasks(layout);
    int[] units = p.layers().isEmpty() ? null : units(layout, shown);
    IdSet filter = Where.select(reader.meta(), p.where());
    int n = codes.size(), d = layout.bits();
    Result[] out = new Result[n];
    Parallel.forEach(n, p.threads(), progress, i -> {
      long[] q = codes.codes().code(i);
      Hits cands = candidates(reader, q, p.candidates(), filter, mask);
      float[] query = Arrays.copyOfRange(queries.activations(), i * d, i * d + d);
      float[] buf = new float[d];
      Ranked r = rerank(cands, query, (id, v) -> reader.magnitudes(id, v, 0), buf, p.metric(), units, p.k());
      List<Neighbor> list = new ArrayList<>(r.size());
      List<Nearest.Neighbor> plain = new ArrayList<>(r.size());
      for (int h = 0; h < r.size(); h++) {
        Nearest.Neighbor nb = Nearest.neighbor(reader, q, r.ids()[h], r.hamming()[h], shown, segMasks);
        plain.add(nb);
        list.add(new Neighbor(nb, r.distance()[h]));
      }
      int radius = cands.size() == 0 ? 0 : cands.dist(cands.size() - 1);
      out[i] = new Result(codes.row(i), cands.size(), radius, List.copyOf(list), Nearest.vote(plain));
    });
    return List.of(out);
  }

  /** The message for an index that keeps no magnitudes: how to build one that does. */
  public static String noMagnitudes(IndexReader reader) {
    return noMagnitudes(reader, "to refine with");
  }

  /** {@link #noMagnitudes(IndexReader)} for another use of them ({@code purpose}, e.g. "to export"). */
  public static String noMagnitudes(IndexReader reader, String purpose) {
    String kind = reader.properties().get(BuildInfo.KIND);
    String how = "codes".equals(kind)
        ? "it was built from codes, which carry none; build it from activations (`Source.activations`) or a model and its inputs (`model`, `Source.inputs`)"
        : reader.properties().get(IndexBuilder.MAGNITUDES) == null
            ? "it was built by an earlier actindex, which kept none; build it again (activations and inputs keep 8 bits per unit by default)"
            : "it was built with `magnitudeBits 0`; build it again with `magnitudeBits` 8 (the default for activations and inputs)";
    return "index " + reader.dir() + " keeps no magnitudes " + purpose + ": " + how;
  }

  /**
   * The {@code c} nearest live codes (in {@code filter}, on {@code mask}'s bits) and every code tied
   * with the {@code c}-th distance, sorted by (distance, id).
   */
  public static Hits candidates(IndexReader reader, long[] q, int c, IdSet filter, long[] mask) {
    return Nearest.withTies(reader, q, c, filter, mask);
  }

  /**
   * Orders {@code cands} (ids and Hamming distances) by {@code metric} between {@code query} and
   * each candidate's vector, read into {@code buf} by {@code vectors}; ties by Hamming distance,
   * then id. {@code units} (nullable = all) are the vector positions that count. Keeps {@code k}.
   */
  public static Ranked rerank(Hits cands, float[] query, Vectors vectors, float[] buf, Metric metric, int[] units, int k) {
    int n = cands.size();
    double[] dist = new double[n];
    Integer[] order = new Integer[n];
    for (int i = 0; i < n; i++) {
      vectors.read(cands.ord(i), buf);
      dist[i] = distance(metric, query, buf, units);
      order[i] = i;
    }
    Arrays.sort(order, (a, b) -> {
      int c = Double.compare(dist[a], dist[b]);
      if (c != 0) return c;
      c = Integer.compare(cands.dist(a), cands.dist(b));
      return c != 0 ? c : Integer.compare(cands.ord(a), cands.ord(b));
    });
    int m = Math.min(k, n);
    int[] ids = new int[m], ham = new int[m];
    double[] ds = new double[m];
    for (int i = 0; i < m; i++) {
      ids[i] = cands.ord(order[i]);
      ham[i] = cands.dist(order[i]);
      ds[i] = dist[order[i]];
    }
    return new Ranked(ids, ham, ds);
  }

  /**
   * The metric between {@code a} and {@code b} over positions {@code units} (null = all of {@code a}).
   * An infinite value of {@code a} (a query row beyond float32, {@link QuerySource.Queries#farRows};
   * {@code b} finite) makes either metric +Infinity: such a row is as far as can be from every vector.
   */
  public static double distance(Metric metric, float[] a, float[] b, int[] units) {
    int n = units == null ? a.length : units.length;
    if (metric == Metric.EUCLIDEAN) {
      double s = 0;
      for (int t = 0; t < n; t++) {
        int j = units == null ? t : units[t];
        double x = (double) a[j] - b[j];
        s += x * x;
      }
      return Math.sqrt(s);
    }
    double dot = 0, na = 0, nb = 0;
    for (int t = 0; t < n; t++) {
      int j = units == null ? t : units[t];
      dot += (double) a[j] * b[j];
      na += (double) a[j] * a[j];
      nb += (double) b[j] * b[j];
    }
    if (Double.isInfinite(na)) return Double.POSITIVE_INFINITY; // a query value beyond float32 (QuerySource.Queries#farRows), as EUCLIDEAN gives
    if (na == 0 || nb == 0) return 1;
    return 1 - dot / Math.sqrt(na * nb);
  }

  /** The vector positions (code bits) of the given segments. */
  static int[] units(CodeLayout layout, int[] segments) {
    int total = 0;
    for (int s : segments) total += layout.segments().get(s).bits();
    int[] out = new int[total];
    int at = 0;
    for (int s : segments) for (int b = 0; b < layout.segments().get(s).bits(); b++) out[at++] = layout.start(s) + b;
    return out;
  }
}
