package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.query.Delete;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.List;
import java.util.concurrent.Callable;
import picocli.CommandLine.ArgGroup;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/** {@code actindex delete}: tombstones for examples named by key or by a metadata filter. */
@Command(name = "delete", mixinStandardHelpOptions = true,
    description = {"Deletes examples from an index in one atomic commit (their ids are never reused).",
        "Their codes stay on disk until 'actindex compact'. An unknown key deletes nothing."})
final class DeleteCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin FormatOption format;

  @ArgGroup(exclusive = true, multiplicity = "1")
  Which which;

  static final class Which {
    @Option(names = "--keys", paramLabel = "FILE", description = "A text file of keys, one per line (UTF-8; blank lines skipped).")
    Path keys;

    @Option(names = "--where", paramLabel = "EXPR", description = "A metadata filter, as in 'nearest --where'.")
    String where;
  }

  @Override
  public Integer call() {
    EmptyFilter.refuse(spec, "--where", which.where, "delete needs a filter such as --where \"split = test\" (it never deletes every example)");
    Delete.Result r = Delete.run(new Delete.Params(index.dir, which.keys, which.where));
    PrintWriter out = spec.commandLine().getOut();
    switch (format.format) {
      case json -> {
        new JsonWriter(out).beginObject()
            .member("index", index.dir.toString())
            .member("matched", r.matched())
            .member("deleted", r.deleted())
            .member("live", r.live())
            .endObject();
        out.println();
      }
      case csv -> new CsvWriter(out, List.of("index", "matched", "deleted", "live"))
          .row(List.of(index.dir.toString(), Integer.toString(r.matched()), Integer.toString(r.deleted()),
              Integer.toString(r.live())));
      case table -> out.println("deleted " + r.deleted() + (r.deleted() == 1 ? " example" : " examples") + " from " + index.dir + "; " + r.live() + " live");
    }
    out.flush();
    if (which.where != null) index.noteIfEmpty(r.live() + r.deleted(), "--where", which.where, r.matched()); // live before the delete
    Summaries.warnings(spec.commandLine().getErr(), r.warnings());
    return ExitCodes.OK;
  }
}
