package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.cli.format.TextTable;
import io.actindex.core.BadInputException;
import io.actindex.index.store.IndexReader;
import io.actindex.query.Layers;
import io.actindex.query.Nearest;
import io.actindex.query.QueryCodes;
import io.actindex.query.QuerySource;
import io.actindex.query.Refine;
import java.io.PrintWriter;
import java.util.ArrayList;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/** {@code actindex nearest}: the k indexed examples nearest to each query, by Hamming distance. */
@Command(name = "nearest", mixinStandardHelpOptions = true,
    description = {"For each query, the k indexed examples nearest by Hamming distance between codes (exact; ties by ascending id).",
        "Shows per-layer distances, key, label, split and metadata, and the neighbours' label vote.",
        "The vote counts every example within the k-th distance, also those tied with the k-th but not listed (--vote-ties).",
        "The vote is a heuristic from neighbours in code space, not a calibrated guarantee.",
        "With --refine, the C nearest by Hamming distance (and all tied with the C-th) are re-ranked by cosine or Euclidean"
            + " distance on the magnitudes the index keeps; the output then gives both distances."})
final class NearestCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin QuerySourceOptions query;

  @Option(names = "-k", paramLabel = "K", defaultValue = "10", description = "Neighbours per query. Default: ${DEFAULT-VALUE}.")
  int k;

  @Option(names = "--where", paramLabel = "EXPR",
      description = "Only examples whose metadata match, e.g. \"split = train and label != idle\" (syntax and limits: docs/where.md).")
  String where;

  @Option(names = "--ties",
      description = "Also list every example tied at the k-th distance (so more than K rows may appear).")
  boolean ties;

  /** Which neighbours the label vote counts. */
  enum VoteTies { include, exclude }

  @Option(names = "--vote-ties", paramLabel = "include|exclude", defaultValue = "include",
      description = {"include: the vote counts every example within the k-th distance, tied ones too (ids never decide it);",
          "exclude: only the first K by (distance, id). Not with --refine. Default: ${DEFAULT-VALUE}."})
  VoteTies voteTies;

  @Option(names = "--refine", paramLabel = "METRIC", arity = "0..1", fallbackValue = "cosine",
      description = "Re-rank the Hamming candidates by cosine or euclidean distance between the query's activations and the"
          + " examples' kept magnitudes (index built with --magnitudes; queries from --activations or --inputs)."
          + " --refine alone: cosine.")
  String refine;

  @Option(names = "--candidates", paramLabel = "C",
      description = "With --refine: Hamming candidates to re-rank (all rows tied with the C-th distance are added). Default: max(100, K).")
  Integer candidates;

  @Mixin LayersOption layers;
  @Mixin FormatOption format;
  @Mixin ThreadsOption threads;

  @Override
  public Integer call() {
    query.check();
    EmptyFilter.refuse(spec, where);
    if (k < 1) throw new ParameterException(spec.commandLine(), "-k must be at least 1, got " + k);
    if (candidates != null && refine == null) throw new ParameterException(spec.commandLine(), "--candidates goes with --refine");
    if (candidates != null && candidates < k)
      throw new ParameterException(spec.commandLine(), "--candidates must be at least 1 and at least -k (" + k + "), got " + candidates);
    if (refine != null && ties) throw new ParameterException(spec.commandLine(), "--ties goes with the plain search, not with --refine");
    if (refine != null)
      GivenOptions.refuse(spec, "is about the plain search's vote; with --refine the vote counts the K re-ranked neighbours", "--vote-ties");
    Refine.Metric metric;
    try {
      metric = refine == null ? null : Refine.Metric.parse(refine);
    } catch (io.actindex.core.BadInputException e) {
      throw new ParameterException(spec.commandLine(), "--refine: " + e.getMessage());
    }
    List<Nearest.Result> results;
    List<Refine.Result> refined = null;
    CsvColumns columns;
    try (IndexReader reader = IndexReader.open(index.dir)) {
      columns = CsvColumns.of(reader, layers.layers);
      if (metric == null) {
        QueryCodes codes = query.load(reader);
        try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "searching")) {
          results = Nearest.run(reader, codes, new Nearest.Params(k, where, layers.layers, threads.resolved(), ties,
              voteTies == VoteTies.include), bar);
        }
      } else {
        if (!reader.hasMagnitudes()) throw new io.actindex.core.BadInputException("--refine: " + Refine.noMagnitudes(reader));
        QuerySource.Queries queries = query.loadWithActivations(reader);
        int c = candidates != null ? candidates : Math.max(Refine.DEFAULT_CANDIDATES, k);
        try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "searching")) {
          refined = Refine.run(reader, queries, new Refine.Params(k, c, metric, where, layers.layers, threads.resolved()), bar);
        }
        results = new ArrayList<>();
        for (Refine.Result r : refined)
          results.add(new Nearest.Result(r.row(), r.neighbors().stream().map(Refine.Neighbor::example).toList(), r.vote()));
      }
      index.noteIfNoneFound(reader, where, results.stream().anyMatch(r -> !r.neighbors().isEmpty()));
      noteIfKAboveLive(results.stream().mapToInt(r -> r.neighbors().size()).max().orElse(k));
    }
    PrintWriter out = spec.commandLine().getOut();
    switch (format.format) {
      case json -> json(out, results, refined);
      case csv -> csv(out, results, refined, columns);
      case table -> table(out, results, refined);
    }
    out.flush();
    return ExitCodes.OK;
  }

  /**
   * One line on stderr when {@code -k} is above the live examples (those {@code --where} matches,
   * with a filter): an exact search then lists every one of them, so an answer's length, {@code
   * listed}, is their count. None when nothing was listed ({@link IndexOption#noteIfNoneFound} says so).
   */
  private void noteIfKAboveLive(int listed) {
    if (listed == 0 || listed >= k) return;
    String examples = listed == 1 ? "live example" : "live examples";
    String which = where == null ? examples + " in the index" : examples + " --where " + BadInputException.quote(where) + " matches";
    PrintWriter err = spec.commandLine().getErr();
    err.println("note: -k " + k + " is more than the " + listed + " " + which + "; each answer lists "
        + (listed == 1 ? "it" : "all " + listed));
    err.flush();
  }

  /** The refined distance of neighbour {@code i} of query {@code q}, as text ("" without refinement). */
  private static String refined(List<Refine.Result> refined, int q, int i) {
    return refined == null ? "" : String.format(java.util.Locale.ROOT, "%.6g", refined.get(q).neighbors().get(i).distance());
  }

  /**
   * The contract: {"k": K, "ties": bool, "results": [{"query": ROW, "neighbors": [{"id", "key",
   * "distance", ...}], "vote": {"label", "votes", "of", "agreement", "neighbors", "within_distance",
   * "ties_included", "ties_left_out"} or null}]}.
   */
  private void json(PrintWriter out, List<Nearest.Result> results, List<Refine.Result> refined) {
    JsonWriter j = new JsonWriter(out).beginObject().member("k", k).name("ties").value(ties);
    if (refined != null)
      j.name("refine").beginObject()
          .member("metric", Refine.Metric.parse(refine).label())
          .member("order", "re-ranking of the Hamming candidates by " + Refine.Metric.parse(refine).label()
              + " distance on the kept magnitudes, not a float search of the whole index")
          .endObject();
    j.name("results").beginArray();
    for (int q = 0; q < results.size(); q++) {
      Nearest.Result r = results.get(q);
      j.beginObject().member("query", r.row());
      if (refined != null) j.member("candidates", refined.get(q).candidates()).member("hamming_radius", refined.get(q).hammingRadius());
      j.name("neighbors").beginArray();
      for (int i = 0; i < r.neighbors().size(); i++) {
        Nearest.Neighbor nb = r.neighbors().get(i);
        j.beginObject()
            .member("id", nb.id())
            .member("key", nb.key())
            .member("distance", nb.distance());
        if (refined != null) j.member("refined_distance", refined.get(q).neighbors().get(i).distance());
        j.name("layer_distances").beginObject();
        for (Map.Entry<String, Integer> e : nb.layerDistances().entrySet()) j.member(e.getKey(), e.getValue());
        j.endObject()
            .member("label", nb.label())
            .member("split", nb.split())
            .name("meta").stringMap(nb.meta())
            .endObject();
      }
      j.endArray().name("vote");
      Nearest.Vote v = r.vote();
      if (v == null) j.nullValue();
      else
        j.beginObject().member("label", v.label()).member("votes", v.votes()).member("of", v.labeled())
            .member("agreement", v.agreement()).member("neighbors", v.neighbors()).member("within_distance", v.withinDistance())
            .name("ties_included").value(v.tiesIncluded()).member("ties_left_out", v.tiesLeftOut()).endObject();
      j.endObject();
    }
    j.endArray().endObject();
    out.println();
  }

  private static List<String> layerNames(List<Nearest.Result> results) {
    Set<String> names = new LinkedHashSet<>();
    for (Nearest.Result r : results) for (Nearest.Neighbor nb : r.neighbors()) names.addAll(nb.layerDistances().keySet());
    return List.copyOf(names);
  }

  /** The metadata columns any neighbour has, sorted by name (stable whatever the neighbours). */
  private static List<String> metaNames(List<Nearest.Result> results) {
    Set<String> names = new java.util.TreeSet<>();
    for (Nearest.Result r : results) for (Nearest.Neighbor nb : r.neighbors()) names.addAll(nb.meta().keySet());
    return List.copyOf(names);
  }

  /**
   * The CSV's per-layer and metadata columns, from the index (the layers counted, in the order
   * {@link Layers#select} gives; every metadata column but key, label and split, sorted by name), so
   * that they do not depend on the neighbours found.
   */
  private record CsvColumns(List<String> layers, List<String> meta) {
    static CsvColumns of(IndexReader reader, List<String> layers) {
      List<String> names = new ArrayList<>();
      for (int s : Layers.select(reader.layout(), layers)) names.add(reader.layout().segments().get(s).name());
      List<String> meta = new ArrayList<>(reader.meta().columns());
      meta.removeAll(List.of("key", "label", "split"));
      return new CsvColumns(List.copyOf(names), List.copyOf(meta));
    }
  }

  private static void csv(PrintWriter out, List<Nearest.Result> results, List<Refine.Result> refined, CsvColumns columns) {
    List<String> layerNames = columns.layers(), metaNames = columns.meta();
    List<String> header = new ArrayList<>(List.of("query", "rank", "id", "key", "distance"));
    if (refined != null) header.add("refined_distance");
    for (String l : layerNames) header.add("distance_" + l);
    header.addAll(List.of("label", "split"));
    header.addAll(metaNames);
    header.addAll(List.of("vote_label", "vote_votes", "vote_of", "vote_agreement", "vote_neighbors", "vote_within_distance",
        "vote_ties_included", "vote_ties_left_out"));
    CsvWriter csv = new CsvWriter(out, header);
    for (int q = 0; q < results.size(); q++) {
      Nearest.Result r = results.get(q);
      int rank = 1;
      for (Nearest.Neighbor nb : r.neighbors()) {
        List<String> row = new ArrayList<>(List.of(Long.toString(r.row()), Integer.toString(rank), Integer.toString(nb.id()),
            nb.key(), Integer.toString(nb.distance())));
        if (refined != null) row.add(CsvWriter.number(refined.get(q).neighbors().get(rank - 1).distance()));
        rank++;
        for (String l : layerNames) row.add(str(nb.layerDistances().get(l)));
        row.add(nb.label());
        row.add(nb.split());
        for (String m : metaNames) row.add(nb.meta().get(m));
        Nearest.Vote v = r.vote();
        if (v == null) for (int c = 0; c < 8; c++) row.add(null);
        else
          row.addAll(List.of(v.label(), Integer.toString(v.votes()), Integer.toString(v.labeled()), CsvWriter.number(v.agreement()),
              Integer.toString(v.neighbors()), Integer.toString(v.withinDistance()), Boolean.toString(v.tiesIncluded()),
              Integer.toString(v.tiesLeftOut())));
        csv.row(row);
      }
    }
  }

  private void table(PrintWriter out, List<Nearest.Result> results, List<Refine.Result> refined) {
    List<String> layerNames = layerNames(results), metaNames = metaNames(results);
    boolean labels = false, splits = false;
    for (Nearest.Result r : results)
      for (Nearest.Neighbor nb : r.neighbors()) {
        labels |= nb.label() != null;
        splits |= nb.split() != null;
      }
    boolean first = true;
    for (int q = 0; q < results.size(); q++) {
      Nearest.Result r = results.get(q);
      if (!first) out.println();
      first = false;
      StringBuilder head = new StringBuilder("query row " + r.row());
      if (r.neighbors().isEmpty()) head.append(": no example matches");
      else if (r.vote() != null) head.append("  vote: ").append(describe(r.vote(), k));
      out.println(io.actindex.core.BadInputException.snippet(head, Integer.MAX_VALUE)); // the label comes from a user's file
      boolean far = refined != null && !r.neighbors().isEmpty() && Double.isInfinite(refined.get(q).neighbors().get(0).distance());
      if (refined != null)
        out.println("  order: " + (far ? "Hamming (its activations do not fit float32: every " + Refine.Metric.parse(refine).label()
            + " distance is infinite)" : "re-ranked by " + Refine.Metric.parse(refine).label() + " distance on the kept magnitudes") + " among "
            + refined.get(q).candidates() + " Hamming candidates (Hamming distance <= " + refined.get(q).hammingRadius() + ")");
      if (r.neighbors().isEmpty()) continue;
      List<String> header = new ArrayList<>(List.of("rank", "distance"));
      if (refined != null) header.set(1, "hamming");
      if (refined != null) header.add(1, Refine.Metric.parse(refine).label());
      header.addAll(layerNames); // per-layer distances, one column per layer
      header.add("key");
      if (labels) header.add("label");
      if (splits) header.add("split");
      header.addAll(metaNames);
      TextTable t = new TextTable(header);
      int rank = 1;
      for (Nearest.Neighbor nb : r.neighbors()) {
        List<String> row = new ArrayList<>(List.of(Integer.toString(rank), Integer.toString(nb.distance())));
        if (refined != null) row.add(1, refined(refined, q, rank - 1));
        rank++;
        for (String l : layerNames) row.add(str(nb.layerDistances().get(l)));
        row.add(nb.key());
        if (labels) row.add(nb.label());
        if (splits) row.add(nb.split());
        for (String m : metaNames) row.add(nb.meta().get(m));
        t.row(row);
      }
      t.print(out, "  ");
    }
  }

  /**
   * "belt-slip (6 of 9, agreement 67%) over 9 neighbours within distance 1 (ties at the 5th
   * distance included)"; the plain "(3 of 5, agreement 60%)" when no tie crosses the k-th place.
   */
  static String describe(Nearest.Vote v, int k) {
    StringBuilder b = new StringBuilder(v.label()).append(" (").append(v.votes()).append(" of ").append(v.labeled())
        .append(", agreement ").append(Units.percent(v.agreement())).append(')');
    if (v.tiesIncluded())
      b.append(" over ").append(v.neighbors()).append(" neighbours within distance ").append(v.withinDistance())
          .append(" (ties at the ").append(ordinal(k)).append(" distance included)");
    else if (v.tiesLeftOut() > 0)
      b.append(" over the first ").append(v.neighbors()).append(" by id; ").append(v.tiesLeftOut())
          .append(" more at distance ").append(v.withinDistance()).append(" left out (--vote-ties exclude)");
    return b.toString();
  }

  /** 1st, 2nd, 3rd, 4th, ..., 11th, 12th, 13th, 21st. */
  static String ordinal(int n) {
    int h = n % 100, t = n % 10;
    String suffix = h >= 11 && h <= 13 ? "th" : t == 1 ? "st" : t == 2 ? "nd" : t == 3 ? "rd" : "th";
    return n + suffix;
  }

  private static String str(Object o) {
    return o == null ? "" : o.toString();
  }
}
