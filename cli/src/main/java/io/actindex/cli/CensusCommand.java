package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.Format;
import io.actindex.cli.format.JsonWriter;
import io.actindex.cli.format.TextTable;
import io.actindex.index.store.IndexReader;
import io.actindex.query.Census;
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

/** {@code actindex census}: how the indexed examples spread over linear regions. */
@Command(name = "census", mixinStandardHelpOptions = true,
    description = {"How the indexed examples spread over linear regions, for each prefix of the layers.",
        "Per prefix: distinct regions, examples per region, label purity and the largest regions. "
            + "Per neuron of those layers: firing rates, with the dead and always-on neurons listed when the examples are enough "
            + "to call them so, and a 95%% bound of how often such a unit may still fire (or not) on new inputs."})
final class CensusCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;

  @Option(names = "--largest", paramLabel = "N", defaultValue = "5",
      description = "List the N largest regions per prefix (table and json). Default: ${DEFAULT-VALUE}.")
  int largest;

  @Option(names = "--examples", paramLabel = "N", defaultValue = "3",
      description = "Example keys per listed region (table and json). Default: ${DEFAULT-VALUE}.")
  int examples;

  @Mixin LayersOption layers;
  @Mixin FormatOption format;

  @Override
  public Integer call() {
    if (largest < 0) throw new ParameterException(spec.commandLine(), "--largest must be 0 or more, got " + largest);
    if (examples < 0) throw new ParameterException(spec.commandLine(), "--examples must be 0 or more, got " + examples);
    if (format.format == Format.csv)
      GivenOptions.refuse(spec, "is about the listed regions; --format csv has one line per neuron and lists no regions (use table or json)",
          "--largest", "--examples");
    Census.Result c;
    try (IndexReader reader = IndexReader.open(index.dir)) {
      try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "counting regions (layer prefixes)")) {
        c = Census.run(reader, new Census.Params(layers.layers, largest, examples), bar);
      }
      index.noteIfEmpty(reader.liveCount());
    }
    PrintWriter out = spec.commandLine().getOut();
    switch (format.format) {
      case json -> json(out, c);
      case csv -> csv(out, c);
      case table -> table(out, c);
    }
    out.flush();
    return ExitCodes.OK;
  }

  private static void json(PrintWriter out, Census.Result c) {
    JsonWriter j = new JsonWriter(out).beginObject().member("examples", c.examples()).name("prefixes").beginArray();
    for (Census.Prefix p : c.prefixes()) {
      j.beginObject().name("layers").beginArray();
      for (String l : p.layers()) j.value(l);
      j.endArray()
          .member("bits", p.bits())
          .member("regions", p.regions())
          .member("singletons", p.singletons())
          .name("histogram").beginArray();
      for (Census.Bucket b : p.histogram())
        j.beginObject().member("min", b.min()).member("max", b.max()).member("regions", b.regions())
            .member("examples", b.examples()).endObject();
      Census.Quantiles q = p.quantiles();
      j.endArray().name("examples_per_region").beginObject();
      // no region (no live example): every member null, as the firing rates are
      if (q == null) for (String m : List.of("min", "p50", "p90", "p99", "max", "mean")) j.name(m).nullValue();
      else j.member("min", q.min()).member("p50", q.p50()).member("p90", q.p90()).member("p99", q.p99())
          .member("max", q.max()).member("mean", q.mean());
      j.endObject();
      j.name("purity");
      if (p.purity() == null) j.nullValue();
      else j.value(p.purity().doubleValue());
      j.name("largest").beginArray();
      for (Census.Big b : p.largest()) {
        j.beginObject().member("count", b.count()).member("active_neurons", b.active()).name("labels").beginObject();
        for (Map.Entry<String, Integer> e : b.labels().entrySet()) j.member(e.getKey(), e.getValue());
        j.endObject().name("keys").beginArray();
        for (String k : b.keys()) j.value(k);
        j.endArray().endObject();
      }
      j.endArray();
      for (String m : List.of("labelled_alone", "purity_shared")) {
        Double v = m.equals("labelled_alone") ? p.labelledAlone() : p.purityShared();
        j.name(m);
        if (v == null) j.nullValue();
        else j.value(v.doubleValue());
      }
      j.endObject();
    }
    j.endArray().name("neurons").beginArray();
    for (Census.Neurons n : c.neurons()) {
      j.beginObject().member("layer", n.layer()).name("firing_rates").beginArray();
      for (double r : n.firingRates()) j.value(r);
      j.endArray().name("dead").beginArray();
      for (String d : n.dead()) j.value(d);
      j.endArray().name("always_on").beginArray();
      for (String a : n.alwaysOn()) j.value(a);
      j.endArray().member("rate_bound", c.rateBound()).name("too_few_examples").value(c.tooFewToCall()).endObject();
    }
    j.endArray().endObject();
    out.println();
  }

  /** CSV: one row per neuron (layer, unit, firing rate, state). */
  private static void csv(PrintWriter out, Census.Result c) {
    CsvWriter csv = new CsvWriter(out, List.of("layer", "unit", "firing_rate", "state"));
    for (Census.Neurons n : c.neurons())
      for (int u = 0; u < n.firingRates().length; u++) {
        String name = n.layer() + ":" + u;
        String state = n.dead().contains(name) ? "dead" : n.alwaysOn().contains(name) ? "always-on" : "";
        csv.row(List.of(n.layer(), Integer.toString(u), CsvWriter.number(n.firingRates()[u]), state));
      }
  }

  private static void table(PrintWriter out, Census.Result c) {
    out.println("examples: " + c.examples());
    out.println();
    out.println("regions by layer prefix (a region = one code on those layers):");
    TextTable t = new TextTable(List.of("layers", "bits", "regions", "singletons", "median size", "p90 size", "largest",
        "mean size", "label purity", "labelled alone", "purity where shared"));
    for (Census.Prefix p : c.prefixes()) {
      Census.Quantiles q = p.quantiles();
      List<String> row = new ArrayList<>(List.of(String.join("+", p.layers()), Integer.toString(p.bits()), Integer.toString(p.regions()),
          Integer.toString(p.singletons())));
      // no region (no live example): no size to give, n/a as for the firing rates
      if (q == null) row.addAll(List.of("n/a", "n/a", "n/a", "n/a"));
      else row.addAll(List.of(Integer.toString(q.p50()), Integer.toString(q.p90()), Integer.toString(q.max()),
          String.format(java.util.Locale.ROOT, "%.2f", q.mean())));
      row.add(p.purity() == null ? "" : Units.percent(p.purity()));
      row.add(p.labelledAlone() == null ? "" : Units.percent(p.labelledAlone()));
      row.add(p.purityShared() == null ? (p.purity() == null ? "" : "n/a") : Units.percent(p.purityShared()));
      t.row(row);
    }
    t.print(out, "  ");
    if (c.prefixes().stream().anyMatch(p -> p.labelledAlone() != null && p.labelledAlone() >= 0.5))
      out.println("  Label purity counts an example with no other labelled example in its region (labelled alone) as pure, whatever its"
          + " label: where most are alone it is high even for random labels; purity where shared counts only the regions that hold two or more.");
    if (c.prefixes().isEmpty()) return;
    Census.Prefix all = c.prefixes().get(c.prefixes().size() - 1);
    String name = String.join("+", all.layers());
    out.println();
    out.println("examples per region (" + name + "):");
    TextTable h = new TextTable(List.of("examples in region", "regions", "examples"));
    for (Census.Bucket b : all.histogram())
      h.row(List.of(b.min() == b.max() ? Integer.toString(b.min()) : b.min() + "-" + b.max(), Integer.toString(b.regions()),
          Long.toString(b.examples())));
    h.print(out, "  ");
    if (!all.largest().isEmpty()) {
      out.println();
      out.println("largest regions (" + name + "):");
      TextTable b = new TextTable(List.of("examples", "neurons on", "labels", "example keys"));
      for (Census.Big g : all.largest())
        b.row(List.of(Integer.toString(g.count()), Integer.toString(g.active()), RegionCommand.labels(g.labels()),
            String.join(", ", g.keys())));
      b.print(out, "  ");
    }
    out.println();
    out.println("neurons:");
    TextTable n = new TextTable(List.of("layer", "units", "mean firing rate", "dead", "always on"));
    boolean call = !c.tooFewToCall();
    List<String> lists = new ArrayList<>();
    for (Census.Neurons layer : c.neurons()) {
      double sum = 0;
      for (double r : layer.firingRates()) sum += r;
      n.row(List.of(layer.layer(), Integer.toString(layer.firingRates().length),
          c.examples() == 0 ? "n/a" : Units.rate(layer.firingRates().length == 0 ? 0 : sum / layer.firingRates().length),
          call ? Integer.toString(layer.dead().size()) : "n/a", call ? Integer.toString(layer.alwaysOn().size()) : "n/a"));
      if (!layer.dead().isEmpty()) lists.add("dead: " + String.join(" ", layer.dead()));
      if (!layer.alwaysOn().isEmpty()) lists.add("always on: " + String.join(" ", layer.alwaysOn()));
    }
    n.print(out, "  ");
    for (String l : lists) out.println("  " + l);
    if (c.deadNote() != null) out.println("  " + c.deadNote());
  }
}
