package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.cli.format.TextTable;
import io.actindex.index.store.IndexReader;
import io.actindex.query.Nearest;
import io.actindex.query.QueryCodes;
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
        "Shows per-layer distances, key, label, split and metadata, and the neighbours' label vote."})
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

  @Mixin LayersOption layers;
  @Mixin FormatOption format;
  @Mixin ThreadsOption threads;

  @Override
  public Integer call() {
    query.check();
    if (k < 1) throw new ParameterException(spec.commandLine(), "-k must be at least 1, got " + k);
    List<Nearest.Result> results;
    try (IndexReader reader = IndexReader.open(index.dir)) {
      QueryCodes codes = query.load(reader);
      try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "searching")) {
        results = Nearest.run(reader, codes, new Nearest.Params(k, where, layers.layers, threads.resolved()), bar);
      }
    }
    PrintWriter out = spec.commandLine().getOut();
    switch (format.format) {
      case json -> json(out, results);
      case csv -> csv(out, results);
      case table -> table(out, results);
    }
    out.flush();
    return ExitCodes.OK;
  }

  /** The contract: {"k": K, "results": [{"query": ROW, "neighbors": [{"id", "key", "distance", ...}]}]}. */
  private void json(PrintWriter out, List<Nearest.Result> results) {
    JsonWriter j = new JsonWriter(out).beginObject().member("k", k).name("results").beginArray();
    for (Nearest.Result r : results) {
      j.beginObject().member("query", r.row()).name("neighbors").beginArray();
      for (Nearest.Neighbor nb : r.neighbors()) {
        j.beginObject()
            .member("id", nb.id())
            .member("key", nb.key())
            .member("distance", nb.distance())
            .name("layer_distances").beginObject();
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

  private static void csv(PrintWriter out, List<Nearest.Result> results) {
    List<String> layerNames = layerNames(results), metaNames = metaNames(results);
    List<String> header = new ArrayList<>(List.of("query", "rank", "id", "key", "distance"));
    for (String l : layerNames) header.add("distance_" + l);
    header.addAll(List.of("label", "split"));
    header.addAll(metaNames);
    CsvWriter csv = new CsvWriter(out, header);
    for (Nearest.Result r : results) {
      int rank = 1;
      for (Nearest.Neighbor nb : r.neighbors()) {
        List<String> row = new ArrayList<>(List.of(Long.toString(r.row()), Integer.toString(rank++), Integer.toString(nb.id()),
            nb.key(), Integer.toString(nb.distance())));
        for (String l : layerNames) row.add(str(nb.layerDistances().get(l)));
        row.add(nb.label());
        row.add(nb.split());
        for (String m : metaNames) row.add(nb.meta().get(m));
        csv.row(row);
      }
    }
  }

  private static void table(PrintWriter out, List<Nearest.Result> results) {
    List<String> layerNames = layerNames(results), metaNames = metaNames(results);
    boolean labels = false, splits = false;
    for (Nearest.Result r : results)
      for (Nearest.Neighbor nb : r.neighbors()) {
        labels |= nb.label() != null;
        splits |= nb.split() != null;
      }
    boolean first = true;
    for (Nearest.Result r : results) {
      if (!first) out.println();
      first = false;
      StringBuilder head = new StringBuilder("query row " + r.row());
      if (r.neighbors().isEmpty()) head.append(": no example matches");
      else if (r.vote() != null)
        head.append("  vote: ").append(r.vote().label()).append(" (").append(r.vote().votes()).append(" of ")
            .append(r.vote().labeled()).append(", agreement ").append(Units.percent(r.vote().agreement())).append(')');
      out.println(head);
      if (r.neighbors().isEmpty()) continue;
      List<String> header = new ArrayList<>(List.of("rank", "distance"));
      header.addAll(layerNames); // per-layer distances, one column per layer
      header.add("key");
      if (labels) header.add("label");
      if (splits) header.add("split");
      header.addAll(metaNames);
      TextTable t = new TextTable(header);
      int rank = 1;
      for (Nearest.Neighbor nb : r.neighbors()) {
        List<String> row = new ArrayList<>(List.of(Integer.toString(rank++), Integer.toString(nb.distance())));
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
