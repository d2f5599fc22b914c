package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.cli.format.TextTable;
import io.actindex.core.BadInputException;
import io.actindex.index.mih.PlannerCalibration;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.List;
import java.util.Locale;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/** {@code actindex calibrate-planner}: this machine's planner costs, measured and kept for every index it opens. */
@Command(name = "calibrate-planner", mixinStandardHelpOptions = true,
    description = {"Times the loops the search planner chooses between (scans, table probes, random reads, filter walks) "
        + "on this machine, a few times, and keeps each cost's median in a small file. Every index opened or built on this "
        + "machine then plans with these costs instead of those measured, under whatever load there was, when it was built. "
        + "Run it on a quiet machine, and again on new hardware. Answers never depend on it: only which exact path answers, "
        + "and so how fast.",
        "The file: --out, else -Dactindex.planner.costs, else $ACTINDEX_PLANNER_COSTS, else "
        + "$XDG_CONFIG_HOME/actindex/planner-costs.properties (~/.config when unset). Delete it to go back."})
final class CalibratePlannerCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin FormatOption format;

  @Option(names = "--runs", paramLabel = "N", defaultValue = "5",
      description = "Measurements to take the median of, 1 to 100 (about 0.2 s each). Default: ${DEFAULT-VALUE}.")
  int runs;

  @Option(names = "--out", paramLabel = "FILE", description = "Where to keep the costs (default: see above).")
  Path out;

  @Option(names = "--dry-run", description = "Measure and print, write nothing (not with --out).")
  boolean dryRun;

  @Override
  public Integer call() {
    if (runs < 1 || runs > 100) throw new ParameterException(spec.commandLine(), "--runs must be 1..100, not " + runs);
    // a dry run writes no file, so a file to write it to means nothing; read as "write here, not to the machine's file" it
    // would leave the user waiting for a file that never comes
    if (dryRun) GivenOptions.refuse(spec, "names the file to write; --dry-run writes none (leave out one of the two)", "--out");
    Path file = out != null ? out : PlannerCalibration.file();
    if (!dryRun) PlannerCalibration.checkTarget(file);
    PlannerCalibration.Result r = PlannerCalibration.calibrate(runs);
    if (!dryRun) {
      try {
        PlannerCalibration.write(r, file);
      } catch (IOException | SecurityException e) {
        throw new BadInputException("planner costs " + file + ": cannot be written (" + e.getMessage() + ")", e);
      }
    }
    PrintWriter o = spec.commandLine().getOut();
    switch (format.format) {
      case json -> {
        JsonWriter j = new JsonWriter(o).beginObject().member("file", file.toString()).name("written").value(!dryRun)
            .member("runs", r.runs()).name("costs").beginArray();
        for (PlannerCalibration.Cost c : r.costs()) j.beginObject().member("name", c.name()).member("ns", c.ns()).member("spread", c.spread()).endObject();
        j.endArray().endObject();
        o.println();
      }
      case csv -> {
        CsvWriter csv = new CsvWriter(o, List.of("name", "ns", "spread"));
        for (PlannerCalibration.Cost c : r.costs()) csv.row(List.of(c.name(), CsvWriter.number(c.ns()), CsvWriter.number(c.spread())));
      }
      case table -> {
        TextTable t = new TextTable(List.of("cost", "ns", "largest / smallest run"));
        for (PlannerCalibration.Cost c : r.costs()) t.row(List.of(c.name(), num(c.ns()), String.format(Locale.ROOT, "%.2f", c.spread())));
        o.println("planner costs on this machine, the median of " + r.runs() + " measurements:");
        t.print(o, "  ");
        o.println(dryRun ? "not written (--dry-run)" : "written to " + file + ": indexes opened or built here plan with these costs");
        if (r.costs().stream().anyMatch(c -> c.spread() > 1.5))
          o.println("some costs varied by more than 1.5x between runs: the machine is busy; run again when it is quiet");
      }
    }
    o.flush();
    return ExitCodes.OK;
  }

  private static String num(double x) {
    return String.format(Locale.ROOT, "%.4g", x);
  }
}
