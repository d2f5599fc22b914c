package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.cli.format.TextTable;
import io.actindex.index.store.IndexReader;
import io.actindex.query.QueryCodes;
import io.actindex.query.Region;
import java.io.PrintWriter;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/** {@code actindex region}: the query's linear region and the populated regions next to it. */
@Command(name = "region", mixinStandardHelpOptions = true,
    description = {"For each query, the indexed examples in its own linear region and the populated regions near it.",
        "Own region: distance 0 on the chosen layers. Then each populated region within R flipped neurons:",
        "its distance, the flipped neurons (layer:unit), how many examples it holds, their labels and some keys."})
final class RegionCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin QuerySourceOptions query;

  @Option(names = "--radius", paramLabel = "R", defaultValue = "2",
      description = "Also list populated regions within R flipped neurons (inclusive; at most the code length of the chosen layers). Default: ${DEFAULT-VALUE}.")
  int radius;

  @Option(names = "--where", paramLabel = "EXPR", description = "Only examples whose metadata match, e.g. \"split = train\" (syntax and limits: docs/where.md).")
  String where;

  @Option(names = "--examples", paramLabel = "N", defaultValue = "3",
      description = "Example keys listed per region (smallest ids first). Default: ${DEFAULT-VALUE}.")
  int examples;

  @Mixin LayersOption layers;
  @Mixin FormatOption format;

  @Override
  public Integer call() {
    query.check();
    EmptyFilter.refuse(spec, where);
    if (radius < 0) throw new ParameterException(spec.commandLine(), "--radius must be 0 or more, got " + radius);
    if (examples < 0) throw new ParameterException(spec.commandLine(), "--examples must be 0 or more, got " + examples);
    List<Region.Result> results;
    try (IndexReader reader = IndexReader.open(index.dir)) {
      QueryCodes codes = query.load(reader);
      try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "searching")) {
        results = Region.run(reader, codes, new Region.Params(radius, layers.layers, where, examples), bar);
      }
      index.noteIfNoneFound(reader, where, results.stream().anyMatch(r -> r.same().count() > 0 || !r.nearby().isEmpty()));
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

  private void json(PrintWriter out, List<Region.Result> results) {
    JsonWriter j = new JsonWriter(out).beginObject().member("radius", radius).name("results").beginArray();
    for (Region.Result r : results) {
      j.beginObject().member("query", r.row()).name("same");
      group(j, r.same());
      j.name("nearby").beginArray();
      for (Region.Group g : r.nearby()) group(j, g);
      j.endArray().endObject();
    }
    j.endArray().endObject();
    out.println();
  }

  private static void group(JsonWriter j, Region.Group g) {
    j.beginObject().member("distance", g.distance()).name("flipped").beginArray();
    for (String f : g.flipped()) j.value(f);
    j.endArray().member("count", g.count()).name("labels").beginObject();
    for (Map.Entry<String, Integer> e : g.labels().entrySet()) j.member(e.getKey(), e.getValue());
    j.endObject().name("keys").beginArray();
    for (String k : g.keys()) j.value(k);
    j.endArray().endObject();
  }

  private static void csv(PrintWriter out, List<Region.Result> results) {
    CsvWriter csv = new CsvWriter(out, List.of("query", "distance", "count", "labels", "flipped", "keys"));
    for (Region.Result r : results) {
      List<Region.Group> all = new ArrayList<>();
      all.add(r.same());
      all.addAll(r.nearby());
      for (Region.Group g : all)
        csv.row(List.of(Long.toString(r.row()), Integer.toString(g.distance()), Integer.toString(g.count()),
            CsvWriter.list(CsvWriter.counted(g.labels())), CsvWriter.list(g.flipped()), CsvWriter.list(g.keys())));
    }
  }

  private static void table(PrintWriter out, List<Region.Result> results) {
    boolean first = true;
    for (Region.Result r : results) {
      if (!first) out.println();
      first = false;
      Region.Group same = r.same();
      String head = "query row " + r.row() + ": its own region holds " + same.count() + " example" + (same.count() == 1 ? "" : "s")
          + (same.count() == 0 ? "" : " (" + labels(same.labels()) + (same.keys().isEmpty() ? "" : "; e.g. "
          + String.join(", ", same.keys())) + ")");
      out.println(io.actindex.core.BadInputException.snippet(head, Integer.MAX_VALUE)); // labels and keys come from a user's file
      if (r.nearby().isEmpty()) {
        out.println("  no other populated region within the radius");
        continue;
      }
      TextTable t = new TextTable(List.of("flips", "examples", "labels", "flipped neurons", "example keys"));
      for (Region.Group g : r.nearby())
        t.row(List.of(Integer.toString(g.distance()), Integer.toString(g.count()), labels(g.labels()),
            String.join(" ", g.flipped()), String.join(", ", g.keys())));
      t.print(out, "  ");
    }
  }

  /** For tables: "normal 10, imbalance 2"; empty when no example has a label. */
  static String labels(Map<String, Integer> mix) {
    List<String> parts = new ArrayList<>();
    mix.forEach((label, n) -> parts.add(TextTable.item(label) + " " + n));
    return String.join(", ", parts);
  }
}
