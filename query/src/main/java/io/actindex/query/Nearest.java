package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeLayout;
import io.actindex.core.Hamming;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.index.meta.MetaStore;
import io.actindex.index.store.IndexReader;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;

/**
 * The {@code k} nearest live examples of each query code (exact Hamming distance), optionally
 * only among examples matching a {@link Where} filter and with the distance counted on some
 * layers only. Neighbours come in ascending distance, ties by ascending id.
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
   * the distance counts (null or empty = all); {@code threads >= 1} queries searched in parallel.
   */
  public record Params(int k, String where, List<String> layers, int threads) {
    public Params {
      if (k < 1) throw new BadInputException("k must be at least 1, got " + k);
      if (threads < 1) throw new BadInputException("threads must be at least 1, got " + threads);
      layers = layers == null ? List.of() : List.copyOf(layers);
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
   * neighbours carry it; {@code agreement = votes / labeled}.
   */
  public record Vote(String label, int votes, int labeled, double agreement) {}

  /** The answer for query row {@code row}; {@code vote} is null when no neighbour has a label. */
  public record Result(long row, List<Neighbor> neighbors, Vote vote) {}

  public static List<Result> run(IndexReader reader, QueryCodes queries, Params p, Progress progress) {
    CodeLayout layout = reader.layout();
    if (!queries.codes().layout().equals(layout))
      throw new BadInputException("query layout " + queries.codes().layout() + " differs from the index layout " + layout);
    int[] shown = Layers.select(layout, p.layers());
    long[] mask = Layers.maskOrNull(layout, p.layers());
    long[][] segMasks = Layers.segmentMasks(layout);
    IdSet filter = Where.filter(reader, p.where());
    Progress prog = progress == null ? Progress.NONE : progress;
    int n = queries.size();
    Result[] out = new Result[n];
    Object lock = new Object();
    long[] done = {0};
    java.util.function.IntConsumer one = i -> {
      out[i] = one(reader, queries, i, p.k(), filter, mask, shown, segMasks);
      synchronized (lock) {
        prog.update(++done[0], n);
      }
    };
    if (p.threads() == 1 || n <= 1) {
      for (int i = 0; i < n; i++) one.accept(i);
    } else {
      try (ExecutorService pool = Executors.newFixedThreadPool(Math.min(p.threads(), n))) {
        List<Future<?>> futures = new ArrayList<>();
        for (int i = 0; i < n; i++) {
          int q = i;
          futures.add(pool.submit(() -> one.accept(q)));
        }
        for (Future<?> f : futures) f.get();
      } catch (InterruptedException e) {
        Thread.currentThread().interrupt();
        throw new IllegalStateException("interrupted", e);
      } catch (ExecutionException e) {
        if (e.getCause() instanceof RuntimeException re) throw re;
        throw new IllegalStateException(e.getCause());
      }
    }
    return List.of(out);
  }

  private static Result one(IndexReader reader, QueryCodes queries, int i, int k, IdSet filter, long[] mask,
      int[] shown, long[][] segMasks) {
    long[] q = queries.codes().code(i);
    Hits hits = reader.search(q, k, filter, mask);
    CodeLayout layout = reader.layout();
    MetaStore meta = reader.meta();
    List<Neighbor> list = new ArrayList<>(hits.size());
    for (int h = 0; h < hits.size(); h++) {
      int id = hits.ord(h);
      long[] code = reader.code(id);
      Map<String, Integer> perLayer = new LinkedHashMap<>();
      for (int s : shown)
        perLayer.put(layout.segments().get(s).name(), Hamming.maskedDistance(q, 0, code, 0, segMasks[s], q.length));
      Map<String, String> doc = new LinkedHashMap<>(meta.document(id));
      String key = doc.remove("key"), label = doc.remove("label"), split = doc.remove("split");
      doc.remove("id");
      list.add(new Neighbor(id, key, hits.dist(h), perLayer, label, split, doc));
    }
    return new Result(queries.row(i), List.copyOf(list), vote(list));
  }

  /** The label vote of some neighbours, or null when none has a label. */
  public static Vote vote(List<Neighbor> neighbors) {
    Map<String, long[]> tally = new HashMap<>(); // label -> {votes, total distance}
    int labeled = 0;
    for (Neighbor nb : neighbors) {
      if (nb.label() == null || nb.label().isEmpty()) continue;
      long[] t = tally.computeIfAbsent(nb.label(), l -> new long[2]);
      t[0]++;
      t[1] += nb.distance();
      labeled++;
    }
    if (labeled == 0) return null;
    Map.Entry<String, long[]> best = tally.entrySet().stream()
        .min(Comparator.<Map.Entry<String, long[]>>comparingLong(e -> -e.getValue()[0])
            .thenComparingLong(e -> e.getValue()[1])
            .thenComparing(Map.Entry::getKey))
        .orElseThrow();
    int votes = (int) best.getValue()[0];
    return new Vote(best.getKey(), votes, labeled, votes / (double) labeled);
  }
}
