package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeLayout;
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
 * The linear region of a query and the populated regions around it. On the chosen layers, the
 * region of a code is the code itself; the examples in the query's own region are those at
 * distance 0, and every other populated region within {@code radius} flipped neurons is reported
 * with its distance, the flipped neurons ({@code layer:unit}), how many live examples it holds,
 * their label mix and a few example keys. Regions come by ascending distance, then by descending
 * count, then by their flipped neurons (bit order).
 *
 * <pre>{@code
 * List<Region.Result> res = Region.run(reader, q, new Region.Params(2, null, null, 5), Progress.NONE);
 * }</pre>
 */
public final class Region {
  private Region() {}

  /**
   * {@code radius >= 0} (inclusive, in flipped neurons); {@code layers} the layers that define a
   * region (null or empty = all); {@code where} an optional filter; {@code examples} how many keys
   * to list per region (the smallest ids).
   */
  public record Params(int radius, List<String> layers, String where, int examples) {
    public Params {
      if (radius < 0) throw new BadParameterException("radius", " must be at least 0, got " + radius);
      if (examples < 0) throw new BadParameterException("examples", " must be at least 0, got " + examples);
      layers = layers == null ? List.of() : List.copyOf(layers);
    }
  }

  /**
   * One populated region: {@code flipped} = the neurons whose state differs from the query's
   * ({@code distance} of them); {@code labels}: label -> examples, most frequent first (examples
   * without a label are not counted); {@code keys}: some example keys, smallest ids first.
   */
  public record Group(int distance, List<String> flipped, int count, Map<String, Integer> labels, List<String> keys) {}

  /** {@code same}: the query's own region (count 0 when no example lies in it); {@code nearby}: the others. */
  public record Result(long row, Group same, List<Group> nearby) {}

  /** Regions for every query. */
  public static List<Result> run(IndexReader reader, QueryCodes queries, Params p, Progress progress) {
    Layers.checkRadius(reader.layout(), p.layers(), p.radius());
    IdSet filter = Where.select(reader.meta(), p.where());
    LabelIndex labels = LabelIndex.of(reader.meta(), reader.maxId());
    Progress prog = progress == null ? Progress.NONE : progress;
    List<Result> out = new ArrayList<>();
    for (int i = 0; i < queries.size(); i++) {
      out.add(run(reader, queries.codes().code(i), queries.row(i), p, filter, labels));
      prog.update(i + 1, queries.size());
    }
    return out;
  }

  static Result run(IndexReader reader, long[] query, long row, Params p, IdSet filter, LabelIndex labels) {
    CodeLayout layout = reader.layout();
    if (query.length != layout.words())
      throw new BadInputException("query has " + query.length + " words, the index layout " + layout + " has " + layout.words());
    long[] mask = Layers.maskOrNull(layout, p.layers());
    if (mask == null) mask = layout.fullMask();
    Hits hits = reader.searchRadius(query, p.radius(), filter, p.layers().isEmpty() ? null : mask);
    MetaStore meta = reader.meta();
    Map<Diff, Acc> groups = new HashMap<>();
    for (int h = 0; h < hits.size(); h++) {
      int id = hits.ord(h);
      long[] diff = reader.code(id);
      for (int w = 0; w < diff.length; w++) diff[w] = (diff[w] ^ query[w]) & mask[w];
      int dist = hits.dist(h);
      Acc acc = groups.computeIfAbsent(new Diff(diff), d -> new Acc(dist));
      acc.add(id, meta, labels, p.examples());
    }
    Group same = new Group(0, List.of(), 0, Map.of(), List.of());
    List<Map.Entry<Diff, Acc>> entries = new ArrayList<>(groups.entrySet());
    entries.sort(Comparator.<Map.Entry<Diff, Acc>>comparingInt(e -> e.getValue().distance)
        .thenComparingInt(e -> -e.getValue().count)
        .thenComparing(Map.Entry::getKey));
    List<Group> nearby = new ArrayList<>();
    for (Map.Entry<Diff, Acc> e : entries) {
      Group g = e.getValue().toGroup(Layers.neurons(layout, e.getKey().bits));
      if (g.distance() == 0) same = g;
      else nearby.add(g);
    }
    return new Result(row, same, List.copyOf(nearby));
  }

  /** Flipped bits of a region relative to the query; ordered by the lowest differing bit. */
  private record Diff(long[] bits) implements Comparable<Diff> {
    @Override
    public boolean equals(Object o) {
      return o instanceof Diff d && Arrays.equals(bits, d.bits);
    }

    @Override
    public int hashCode() {
      return Arrays.hashCode(bits);
    }

    /** Compares the flipped-bit lists lexicographically by bit position. */
    @Override
    public int compareTo(Diff o) {
      for (int w = 0; w < bits.length; w++) {
        long x = bits[w] ^ o.bits[w];
        if (x == 0) continue;
        long lowest = x & -x; // the first position where the lists differ; the one holding it comes first
        return (bits[w] & lowest) != 0 ? -1 : 1;
      }
      return 0;
    }
  }

  private static final class Acc {
    final int distance;
    int count;
    final Map<String, Integer> labels = new HashMap<>();
    final List<String> keys = new ArrayList<>();

    Acc(int distance) {
      this.distance = distance;
    }

    void add(int id, MetaStore meta, LabelIndex labelIndex, int examples) {
      count++;
      String label = labelIndex.label(id);
      if (label != null && !label.isEmpty()) labels.merge(label, 1, Integer::sum);
      if (keys.size() < examples) keys.add(meta.document(id).get("key"));
    }

    Group toGroup(List<String> flipped) {
      return new Group(distance, flipped, count, sortedCounts(labels), List.copyOf(keys));
    }
  }

  /** Label counts, largest first, ties by label. */
  static Map<String, Integer> sortedCounts(Map<String, Integer> counts) {
    Map<String, Integer> out = new LinkedHashMap<>();
    counts.entrySet().stream()
        .sorted(Map.Entry.<String, Integer>comparingByValue().reversed().thenComparing(Map.Entry.comparingByKey()))
        .forEach(e -> out.put(e.getKey(), e.getValue()));
    return out;
  }
}
