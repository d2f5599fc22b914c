package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.query.Delete;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.List;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/** {@code actindex delete}: tombstones for examples named by key or by a metadata filter. */
@Command(name = "delete", mixinStandardHelpOptions = true,
    description = {"Deletes examples from an index in one atomic commit (their ids are never reused).",
        "Name the examples with --keys FILE or --where EXPR (exactly one of them). "
            + "A segment left with more than a quarter of its codes deleted is rewritten without them; "
            + "other deleted codes stay on disk until a merge or 'actindex compact'. A key that names no live example (deleted already, or never added) "
            + "refuses the whole delete, unless --skip-missing is given."})
final class DeleteCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin FormatOption format;

  @Option(names = "--skip-missing", description = "With --keys: keys that name no live example (deleted already, or never added) are "
      + "skipped and named on stderr, and the others deleted, instead of refusing the whole delete (for rerunning a list, or one that "
      + "grows).")
  boolean skipMissing;

  // Two plain options, not an exclusive picocli group: a group answered --where given twice with
  // "expected only one match but got (--keys=FILE | --where=EXPR)={...} and ...".
  @Option(names = "--keys", paramLabel = "FILE", description = "A text file of keys, one per line (UTF-8; blank lines skipped; spaces around a key are not part of it). A key of no live example "
      + "refuses the whole delete (nothing changes).")
  Path keys;

  @Option(names = "--where", paramLabel = "EXPR", description = "A metadata filter, as in 'nearest --where'.")
  String where;

  @Override
  public Integer call() {
    if ((keys == null) == (where == null))
      throw new ParameterException(spec.commandLine(), "give the examples to delete as --keys FILE or --where EXPR (one of them)");
    EmptyFilter.refuse(spec, "--where", where, "delete needs a filter such as --where \"split = test\" (it never deletes every example)");
    if (where != null) GivenOptions.refuse(spec, "is about --keys; --where names live examples only", "--skip-missing");
    Delete.Result r = Delete.run(new Delete.Params(index.dir, keys, where, skipMissing));
    PrintWriter out = spec.commandLine().getOut();
    switch (format.format) {
      case json -> {
        new JsonWriter(out).beginObject()
            .member("index", index.dir.toString())
            .member("matched", r.matched())
            .member("deleted", r.deleted())
            .member("live", r.live())
            .member("not_live", r.notLive().size())
            .member("rewritten_segments", r.rewrittenSegments())
            .member("dropped_codes", r.droppedCodes())
            .endObject();
        out.println();
      }
      case csv -> new CsvWriter(out, List.of("index", "matched", "deleted", "live", "not_live", "rewritten_segments", "dropped_codes"))
          .row(List.of(index.dir.toString(), Integer.toString(r.matched()), Integer.toString(r.deleted()),
              Integer.toString(r.live()), Integer.toString(r.notLive().size()), Integer.toString(r.rewrittenSegments()),
              Long.toString(r.droppedCodes())));
      case table -> out.println("deleted " + r.deleted() + (r.deleted() == 1 ? " example" : " examples") + " from " + index.dir + "; " + r.live() + " live"
          + (r.rewrittenSegments() == 0 ? "" : "; rewrote " + r.rewrittenSegments() + (r.rewrittenSegments() == 1 ? " segment" : " segments")
              + " without " + r.droppedCodes() + " deleted " + (r.droppedCodes() == 1 ? "code" : "codes")));
    }
    out.flush();
    if (where != null) index.noteIfEmpty(r.live() + r.deleted(), "--where", where, r.matched()); // live before the delete
    if (!r.notLive().isEmpty()) noteNotLive(r.notLive());
    Summaries.warnings(spec.commandLine().getErr(), r.warnings());
    return ExitCodes.OK;
  }

  /** Shown of the keys that named no live example; the note counts the rest. */
  static final int NOT_LIVE_SHOWN = 5;

  private void noteNotLive(List<String> notLive) {
    int n = notLive.size();
    String shown = String.join(", ", notLive.subList(0, Math.min(n, NOT_LIVE_SHOWN)));
    PrintWriter err = spec.commandLine().getErr();
    err.println("note: keys file " + keys + ": " + n + (n == 1 ? " key names" : " keys name")
        + " no live example (deleted already, or never added) and " + (n == 1 ? "was" : "were") + " skipped: " + shown
        + (n > NOT_LIVE_SHOWN ? " and " + (n - NOT_LIVE_SHOWN) + " more" : ""));
    err.flush();
  }
}
