package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.cli.format.TextTable;
import io.actindex.index.store.IndexReader;
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
      description = "Only examples whose metadata match, e.g. \"split = train and label != idle\" (syntax in the README).")
  String where;

  @Option(names = "--refine", paramLabel = "METRIC",
      description = "Re-rank the Hamming candidates by cosine or euclidean distance between the query's activations and the"
          + " examples' kept magnitudes (index built with --magnitudes; queries from --activations or --inputs).")
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
    if (k < 1) throw new ParameterException(spec.commandLine(), "-k must be at least 1, got " + k);
    if (candidates != null && refine == null) throw new ParameterException(spec.commandLine(), "--candidates goes with --refine");
    if (candidates != null && candidates < k)
      throw new ParameterException(spec.commandLine(), "--candidates must be at least 1 and at least -k (" + k + "), got " + candidates);
    Refine.Metric metric;
    try {
      metric = refine == null ? null : Refine.Metric.parse(refine);
    } catch (io.actindex.core.BadInputException e) {
      throw new ParameterException(spec.commandLine(), "--refine: " + e.getMessage());
    }
    List<Nearest.Result> results;
    List<Refine.Result> refined = null;
    try (IndexReader reader = IndexReader.open(index.dir)) {
      if (metric == null) {
        QueryCodes codes = query.load(reader);
        try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "searching")) {
          results = Nearest.run(reader, codes, new Nearest.Params(k, where, layers.layers, threads.resolved()), bar);
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
    }
    PrintWriter out = spec.commandLine().getOut();
    switch (format.format) {
      case json -> json(out, results, refined);
      case csv -> csv(out, results, refined);
      case table -> table(out, results, refined);
    }
    out.flush();
    return ExitCodes.OK;
  }

  /** The refined distance of neighbour {@code i} of query {@code q}, as text ("" without refinement). */
  private static String refined(List<Refine.Result> refined, int q, int i) {
    return refined == null ? "" : String.format(java.util.Locale.ROOT, "%.6g", refined.get(q).neighbors().get(i).distance());
  }

  /** The contract: {"k": K, "results": [{"query": ROW, "neighbors": [{"id", "key", "distance", ...}]}]}. */
  private void json(PrintWriter out, List<Nearest.Result> results, List<Refine.Result> refined) {
    JsonWriter j = new JsonWriter(out).beginObject().member("k", k);
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
      j.endArray().endObject();
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

  private static void csv(PrintWriter out, List<Nearest.Result> results, List<Refine.Result> refined) {
    List<String> layerNames = layerNames(results), metaNames = metaNames(results);
    List<String> header = new ArrayList<>(List.of("query", "rank", "id", "key", "distance"));
    if (refined != null) header.add("refined_distance");
    for (String l : layerNames) header.add("distance_" + l);
    header.addAll(List.of("label", "split"));
    header.addAll(metaNames);
    CsvWriter csv = new CsvWriter(out, header);
    for (int q = 0; q < results.size(); q++) {
      Nearest.Result r = results.get(q);
      int rank = 1;
      for (Nearest.Neighbor nb : r.neighbors()) {
        List<String> row = new ArrayList<>(List.of(Long.toString(r.row()), Integer.toString(rank), Integer.toString(nb.id()),
            nb.key(), Integer.toString(nb.distance())));
        if (refined != null) row.add(refined(refined, q, rank - 1));
        rank++;
        for (String l : layerNames) row.add(str(nb.layerDistances().get(l)));
        row.add(nb.label());
        row.add(nb.split());
        for (String m : metaNames) row.add(nb.meta().get(m));
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
      else if (r.vote() != null)
        head.append("  vote: ").append(r.vote().label()).append(" (").append(r.vote().votes()).append(" of ")
            .append(r.vote().labeled()).append(", agreement ").append(Units.percent(r.vote().agreement())).append(')');
      out.println(head);
      if (refined != null)
        out.println("  order: re-ranked by " + Refine.Metric.parse(refine).label() + " distance on the kept magnitudes among "
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

  private static String str(Object o) {
    return o == null ? "" : o.toString();
  }
}
