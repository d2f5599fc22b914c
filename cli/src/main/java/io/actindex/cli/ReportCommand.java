package io.actindex.cli;

import io.actindex.cli.format.JsonWriter;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.index.store.IndexReader;
import io.actindex.query.Report;
import io.actindex.query.Source;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.Locale;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/** {@code actindex report}: a self-contained HTML page about one index. */
@Command(name = "report", mixinStandardHelpOptions = true,
    description = {"Writes one self-contained HTML page about an index.",
        "Inline SVG charts, each with a table beside it (its numbers, or a summary for the firing rates per unit and the calibration scores); no script, nothing fetched, opens offline. "
            + "Sections: layout and size, examples per linear region, neuron firing rates, distance to the nearest other "
            + "example by split, label purity of regions; the out-of-distribution calibration when one is stored; "
            + "near-duplicates with --dupes-radius; a comparison with --compare-a/--compare-b."})
final class ReportCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;

  @Option(names = "--out", paramLabel = "FILE.html", required = true, description = "The page to write (replaced if it exists).")
  Path out;

  @Option(names = "--title", paramLabel = "TEXT", description = "Heading of the page (not blank). Default: the index folder's name.")
  String title;

  @Option(names = "--dupes-radius", paramLabel = "R",
      description = "Add the near-duplicate join at radius R (summary, leaking and conflicting groups, the largest groups).")
  Integer dupesRadius;

  @Option(names = "--compare-a", paramLabel = "FILE", description = "Add a comparison of two samples: A, a file of --compare-kind.")
  Path compareA;

  @Option(names = "--compare-b", paramLabel = "FILE", description = "Sample B of the comparison.")
  Path compareB;

  @Option(names = "--compare-kind", paramLabel = "KIND",
      description = "What --compare-a and --compare-b hold: inputs (run through the index's model), activations or codes. Default: what the"
          + " index was built from; for a model's index, inputs or hidden activations by each file's width (a width that fits both is"
          + " refused: say which), as compare --index does.")
  Source.Kind compareKind;

  @Mixin HeaderOption header;

  @Mixin ThreadsOption threads;
  @Mixin FormatOption format;

  @Override
  public Integer call() throws IOException {
    PrintWriter err = spec.commandLine().getErr();
    if (compareA == null) GivenOptions.refuse(spec, "goes with --compare-a and --compare-b", "--compare-kind");
    if (title != null && title.isBlank()) // an unset shell variable: the page had an empty heading and tab title
      throw new ParameterException(spec.commandLine(), "--title is empty; leave it out for the index folder's name");
    CsvMatrixReader.Header csvHeader = header.of(compareA, compareB);
    Report.Result r;
    int live;
    try (IndexReader reader = IndexReader.open(index.dir);
        Progress progress = Progress.onTerminal(err, "measuring nearest-other distances")) {
      r = Report.run(reader, new Report.Params(out, title, dupesRadius, compareA, compareB, compareKind, csvHeader,
          threads.resolved()), progress);
      live = reader.liveCount();
    }
    index.noteIfEmpty(live);
    // the comparison's notes, worded as compare prints them
    Summaries.notes(err, r.notes().stream().map(n -> "note: " + n).toList());
    PrintWriter o = spec.commandLine().getOut();
    switch (format.format) {
      case json -> {
        new JsonWriter(o).beginObject().member("out", r.out().toString()).member("bytes", r.bytes())
            .member("examples", r.facts().examples()).endObject();
        o.println();
      }
      case csv -> o.println("out,bytes,examples\n" + r.out() + "," + r.bytes() + "," + r.facts().examples());
      case table -> o.printf(Locale.ROOT, "wrote %s (%.1f KB) about %s; open it in any browser (works offline)%n", r.out(),
          r.bytes() / 1024.0, io.actindex.query.report.HtmlPage.count(r.facts().examples(), "example"));
    }
    o.flush();
    if (r.liveCheck() != null) OodCommand.liveNote(err, r.liveCheck()); // the page's OOD section says the same
    return ExitCodes.OK;
  }
}
