package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeLayout;
import io.actindex.core.Hamming;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.index.meta.MetaStore;
import io.actindex.index.meta.Where;
import io.actindex.index.store.IndexReader;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Comparator;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * The {@code k} nearest live examples of each query code (exact Hamming distance), optionally
 * only among examples matching a {@link Where} filter and with the distance counted on some
 * layers only. Neighbours come in ascending distance, ties by ascending id.
 *
 * <p>Ties: with short codes many examples often share the k-th distance, and which of them make
 * the first k is then decided by id (file order), not by the model. With {@link Params#ties()}
 * every example tied at the k-th distance is listed (more than k rows). The label vote, by default
 * ({@link Params#voteOverTies()}), counts the whole group within the k-th distance whether or not
 * it is listed, so ids never decide the vote; {@link Vote} says which neighbours it counted.
 *
 * <pre>{@code
 * try (IndexReader r = IndexReader.open(dir)) {
 *   QueryCodes q = QuerySource.load(r, Source.activations(Path.of("new.npy")), RowRange.ALL);
 *   List<Nearest.Result> res = Nearest.run(r, q, new Nearest.Params(5, "split = train", null, 2), Progress.NONE);
 * }
 * }</pre>
 */
public final class Nearest {
  private Nearest() {}

  /**
   * {@code k >= 1} neighbours per query; {@code where} a filter or null; {@code layers} the layers
   * the distance counts (null or empty = all); {@code threads >= 1} queries searched in parallel;
   * {@code ties}: also list every example tied at the k-th distance; {@code voteOverTies}: the vote
   * counts every neighbour within the k-th distance (true) or only the first k by (distance, id).
   */
  public record Params(int k, String where, List<String> layers, int threads, boolean ties, boolean voteOverTies) {
    public Params {
      if (k < 1) throw new BadParameterException("k", " must be at least 1, got " + k);
      Parallel.checkThreads(threads);
      layers = layers == null ? List.of() : List.copyOf(layers);
    }

    /** k rows per query, the vote over the whole tie group at the k-th distance. */
    public Params(int k, String where, List<String> layers, int threads) {
      this(k, where, layers, threads, false, true);
    }
  }

  /**
   * One neighbour. {@code layerDistances}: distance per layer (all layers, or the chosen ones), in
   * layout order; {@code meta}: the metadata fields other than key, label and split.
   */
  public record Neighbor(int id, String key, int distance, Map<String, Integer> layerDistances, String label, String split,
      Map<String, String> meta) {}

  /**
   * The neighbours' label vote: the label most of them carry (ties: the label whose neighbours'
   * total distance is smallest, then the smaller label name), {@code votes} of {@code labeled}
   * neighbours carry it; {@code agreement = votes / labeled}. The vote counted {@code neighbors}
   * neighbours (labelled or not), all within distance {@code withinDistance}; {@code tiesIncluded}:
   * more than k of them, because of ties at the k-th distance; {@code tiesLeftOut}: neighbours at
   * the k-th distance left out because only the first k by id were counted.
   */
  public record Vote(String label, int votes, int labeled, double agreement, int neighbors, int withinDistance,
      boolean tiesIncluded, int tiesLeftOut) {}

  /**
   * The answer for query row {@code row}: the neighbours (k, fewer when fewer examples match, or
   * more with {@link Params#ties()}); {@code vote} is null when no counted neighbour has a label.
   */
  public record Result(long row, List<Neighbor> neighbors, Vote vote) {}

  public static List<Result> run(IndexReader reader, QueryCodes queries, Params p, Progress progress) {
    CodeLayout layout = reader.layout();
    if (!queries.codes().layout().equals(layout))
      throw new BadInputException("query layout " + queries.codes().layout() + " differs from the index layout " + layout);
    int[] shown = Layers.select(layout, p.layers());
    long[] mask = Layers.maskOrNull(layout, p.layers());
    long[][] segMasks = Layers.segmentMasks(layout);
    IdSet filter = Where.select(reader.meta(), p.where());
    int n = queries.size();
    Result[] out = new Result[n];
    Parallel.forEach(n, p.threads(), progress,
        i -> out[i] = one(reader, queries.codes().code(i), queries.row(i), p, filter, mask, shown, segMasks));
    return List.of(out);
  }

  private static Result one(IndexReader reader, long[] q, long row, Params p, IdSet filter, long[] mask, int[] shown,
      long[][] segMasks) {
    int k = p.k();
    Hits group = withTies(reader, q, k, filter, mask);
    int first = Math.min(k, group.size());
    int listed = p.ties() ? group.size() : first;
    MetaStore meta = reader.meta();
    List<Neighbor> list = new ArrayList<>(listed);
    for (int h = 0; h < listed; h++) list.add(neighbor(reader, q, group.ord(h), group.dist(h), shown, segMasks));
    int counted = p.voteOverTies() ? group.size() : first;
    List<String> voteLabels = new ArrayList<>(counted);
    for (int h = 0; h < counted; h++) voteLabels.add(h < listed ? list.get(h).label() : label(meta, group.ord(h)));
    Vote vote = vote(voteLabels, Arrays.copyOf(group.dists(), counted), counted > k, group.size() - counted);
    return new Result(row, List.copyOf(list), vote);
  }

  /** Live id {@code id} at Hamming distance {@code distance} from {@code q}, with its metadata. */
  static Neighbor neighbor(IndexReader reader, long[] q, int id, int distance, int[] shown, long[][] segMasks) {
    CodeLayout layout = reader.layout();
    long[] code = reader.code(id);
    Map<String, Integer> perLayer = new LinkedHashMap<>();
    for (int s : shown)
      perLayer.put(layout.segments().get(s).name(), Hamming.maskedDistance(q, 0, code, 0, segMasks[s], q.length));
    Map<String, String> doc = new LinkedHashMap<>(reader.meta().document(id));
    String key = doc.remove("key"), label = doc.remove("label"), split = doc.remove("split");
    doc.remove("id");
    return new Neighbor(id, key, distance, perLayer, label, split, doc);
  }

  /**
   * The k nearest and every further code tied with the k-th, sorted by (distance, id): one kNN
   * search for k+1 tells whether a tie crosses the k-th place; only then a radius search at the
   * k-th distance collects the whole group.
   */
  static Hits withTies(IndexReader reader, long[] q, int k, IdSet filter, long[] mask) {
    Hits hits = reader.search(q, k == Integer.MAX_VALUE ? k : k + 1, filter, mask);
    if (hits.size() <= k) return hits;
    if (hits.dist(k) > hits.dist(k - 1)) return Hits.sorted(hits.ords(), hits.dists(), k);
    return reader.searchRadius(q, hits.dist(k - 1), filter, mask);
  }

  /** The label vote of some neighbours, all counted, or null when none has a label. */
  public static Vote vote(List<Neighbor> neighbors) {
    List<String> labels = new ArrayList<>(neighbors.size());
    int[] dists = new int[neighbors.size()];
    for (int i = 0; i < dists.length; i++) {
      labels.add(neighbors.get(i).label());
      dists[i] = neighbors.get(i).distance();
    }
    return vote(labels, dists, false, 0);
  }

  private static Vote vote(List<String> labels, int[] dists, boolean tiesIncluded, int tiesLeftOut) {
    Map<String, long[]> tally = new HashMap<>(); // label -> {votes, total distance}
    int labeled = 0, within = 0;
    for (int i = 0; i < dists.length; i++) {
      within = Math.max(within, dists[i]);
      String label = labels.get(i);
      if (label == null || label.isEmpty()) continue;
      long[] t = tally.computeIfAbsent(label, l -> new long[2]);
      t[0]++;
      t[1] += dists[i];
      labeled++;
    }
    if (labeled == 0) return null;
    Map.Entry<String, long[]> best = tally.entrySet().stream()
        .min(Comparator.<Map.Entry<String, long[]>>comparingLong(e -> -e.getValue()[0])
            .thenComparingLong(e -> e.getValue()[1])
            .thenComparing(Map.Entry::getKey))
        .orElseThrow();
    int votes = (int) best.getValue()[0];
    return new Vote(best.getKey(), votes, labeled, votes / (double) labeled, dists.length, within, tiesIncluded, tiesLeftOut);
  }

  /** The label of a live id (one stored-fields read, as for a listed neighbour). */
  private static String label(MetaStore meta, int id) {
    Map<String, String> doc = meta.document(id);
    return doc == null ? null : doc.get("label");
  }
}
