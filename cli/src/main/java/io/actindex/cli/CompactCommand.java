package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.query.Compact;
import java.io.PrintWriter;
import java.util.List;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Spec;

/** {@code actindex compact}: segments rewritten without deleted codes. */
@Command(name = "compact", mixinStandardHelpOptions = true,
    description = {"Rewrites an index's segments without the codes of deleted examples, in one atomic commit.",
        "The segments are merged into as few as the size cap allows. Every byte read is checked first. Ids stay."})
final class CompactCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin StructureThreadsOption threads;
  @Mixin FormatOption format;

  @Override
  public Integer call() {
    Compact.Result r;
    try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "compacting (codes read, then written)")) {
      r = Compact.run(new Compact.Params(index.dir, threads.value()), bar);
    }
    PrintWriter out = spec.commandLine().getOut();
    switch (format.format) {
      case json -> {
        new JsonWriter(out).beginObject()
            .member("index", index.dir.toString())
            .member("segments_before", r.segmentsBefore())
            .member("segments_after", r.segmentsAfter())
            .member("stored_before", r.storedBefore())
            .member("stored_after", r.storedAfter())
            .endObject();
        out.println();
      }
      case csv -> new CsvWriter(out, List.of("index", "segments_before", "segments_after", "stored_before", "stored_after"))
          .row(List.of(index.dir.toString(), Integer.toString(r.segmentsBefore()), Integer.toString(r.segmentsAfter()),
              Long.toString(r.storedBefore()), Long.toString(r.storedAfter())));
      case table -> out.println("compacted " + index.dir + ": " + r.segmentsBefore() + " -> " + r.segmentsAfter()
          + " segments, " + r.storedBefore() + " -> " + r.storedAfter() + " stored codes");
    }
    out.flush();
    Summaries.warnings(spec.commandLine().getErr(), r.warnings());
    return ExitCodes.OK;
  }
}
