package io.actindex.cli;

import java.util.ArrayList;
import java.util.Comparator;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.function.Predicate;

/**
 * The test's own answers, computed bit by bit from {@code boolean[]} codes with nothing from the
 * project's search code: brute-force nearest neighbours (sorted by distance, then id), radius
 * groups and census counts.
 */
final class Reference {
  private Reference() {}

  /** One indexed example: id, code bits, metadata row as written to the CSV (empty values left out). */
  record Example(int id, boolean[] bits, Map<String, String> meta) {}

  /** A layer of the reference layout: name, first bit, width. */
  record Layer(String name, int start, int bits) {}

  static List<Layer> layers(String... nameBits) {
    List<Layer> out = new ArrayList<>();
    int start = 0;
    for (String nb : nameBits) {
      String[] p = nb.split(":");
      int w = Integer.parseInt(p[1]);
      out.add(new Layer(p[0], start, w));
      start += w;
    }
    return out;
  }

  static int distance(boolean[] a, boolean[] b, List<Layer> on) {
    int d = 0;
    for (Layer l : on) for (int i = l.start(); i < l.start() + l.bits(); i++) if (a[i] != b[i]) d++;
    return d;
  }

  record Hit(int id, int distance) {}

  /** The k nearest accepted examples, ascending distance, ties by ascending id. */
  static List<Hit> knn(List<Example> live, boolean[] q, int k, Predicate<Map<String, String>> accept, List<Layer> on) {
    List<Hit> all = new ArrayList<>();
    for (Example e : live) if (accept.test(e.meta())) all.add(new Hit(e.id(), distance(q, e.bits(), on)));
    all.sort(Comparator.comparingInt(Hit::distance).thenComparingInt(Hit::id));
    return all.subList(0, Math.min(k, all.size()));
  }

  /** A populated region near a query: flipped neuron names (layer:unit), label counts, member ids (ascending). */
  record Group(List<String> flipped, Map<String, Integer> labels, List<Integer> ids) {
    int count() {
      return ids.size();
    }
  }

  /** Examples within {@code radius} of {@code q} grouped by which bits differ; key = flipped names joined by spaces. */
  static Map<String, Group> groups(List<Example> live, boolean[] q, int radius, List<Layer> layers) {
    Map<String, Group> out = new LinkedHashMap<>();
    for (Example e : live) {
      if (distance(q, e.bits(), layers) > radius) continue;
      List<String> flipped = new ArrayList<>();
      for (Layer l : layers)
        for (int i = 0; i < l.bits(); i++) if (q[l.start() + i] != e.bits()[l.start() + i]) flipped.add(l.name() + ":" + i);
      String key = String.join(" ", flipped);
      Group g = out.computeIfAbsent(key, x -> new Group(flipped, new HashMap<>(), new ArrayList<>()));
      String label = e.meta().get("label");
      if (label != null) g.labels().merge(label, 1, Integer::sum);
      g.ids().add(e.id());
    }
    return out;
  }

  /** Distinct codes on {@code prefix}, with their member lists. */
  static Map<String, List<Example>> regions(List<Example> live, List<Layer> prefix) {
    Map<String, List<Example>> out = new LinkedHashMap<>();
    for (Example e : live) {
      StringBuilder sb = new StringBuilder();
      for (Layer l : prefix) for (int i = l.start(); i < l.start() + l.bits(); i++) sb.append(e.bits()[i] ? '1' : '0');
      out.computeIfAbsent(sb.toString(), x -> new ArrayList<>()).add(e);
    }
    return out;
  }

  /** Fraction of labelled examples carrying their region's majority label. */
  static double purity(Map<String, List<Example>> regions) {
    long majority = 0, labelled = 0;
    for (List<Example> members : regions.values()) {
      Map<String, Integer> mix = new HashMap<>();
      for (Example e : members) if (e.meta().get("label") != null) mix.merge(e.meta().get("label"), 1, Integer::sum);
      labelled += mix.values().stream().mapToInt(Integer::intValue).sum();
      majority += mix.values().stream().mapToInt(Integer::intValue).max().orElse(0);
    }
    return majority / (double) labelled;
  }
}
