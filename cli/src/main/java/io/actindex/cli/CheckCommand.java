package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.cli.format.TextTable;
import io.actindex.core.BadInputException;
import io.actindex.index.store.IndexCheck;
import io.actindex.query.Check;
import java.io.PrintWriter;
import java.util.List;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Spec;

/** {@code actindex check}: every byte of every file of an index, reported per file. */
@Command(name = "check", mixinStandardHelpOptions = true,
    description = {"Verifies every byte of every file of an index and reports per file; never writes.",
        "Checks each file's CRC32, every hash-table key against its codes, and the checksum of every metadata (Lucene) file. "
            + "Exits 2, naming the first damaged file, if any is damaged. Files the index does not use are listed as "
            + "leftovers (exit 0 when the index is sound); while an add, delete or compact runs, a note says so (its files "
            + "in progress are among the leftovers)."})
final class CheckCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin FormatOption format;

  @Override
  public Integer call() {
    IndexCheck.Report r;
    try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "checking files")) {
      r = Check.run(new Check.Params(index.dir), bar);
    }
    PrintWriter out = spec.commandLine().getOut();
    switch (format.format) {
      case json -> {
        JsonWriter j = new JsonWriter(out).beginObject()
            .member("index", index.dir.toString())
            .member("generation", r.generation())
            .name("ok").value(r.ok())
            .name("files").beginArray();
        for (IndexCheck.FileResult f : r.files()) {
          j.beginObject().member("file", f.file()).member("bytes", f.bytes()).name("ok").value(f.ok()).member("status", f.status());
          if (f.problem() != null) j.member("problem", f.problem());
          j.endObject();
        }
        for (IndexCheck.Leftover f : r.leftovers())
          j.beginObject().member("file", f.file()).member("bytes", f.bytes()).name("ok").value(true).member("status", LEFTOVER)
              .name("removed_by_next_change").value(f.removedByWriter()).endObject();
        j.endArray().name("writer_running").value(r.writerRunning()).endObject();
        out.println();
      }
      case csv -> {
        CsvWriter csv = new CsvWriter(out, List.of("file", "bytes", "ok", "problem", "status"));
        for (IndexCheck.FileResult f : r.files())
          csv.row(List.of(f.file(), Long.toString(f.bytes()), Boolean.toString(f.ok()), f.problem() == null ? "" : f.problem(), f.status()));
        for (IndexCheck.Leftover f : r.leftovers())
          csv.row(List.of(f.file(), Long.toString(f.bytes()), "true", "", LEFTOVER));
      }
      case table -> {
        TextTable t = new TextTable(List.of("file", "bytes", "status"));
        for (IndexCheck.FileResult f : r.files())
          t.row(List.of(f.file(), f.file().equals("index") ? "" : Long.toString(f.bytes()), f.status()));
        for (IndexCheck.Leftover f : r.leftovers()) t.row(List.of(f.file(), Long.toString(f.bytes()), LEFTOVER));
        out.println("index " + index.dir + ", generation " + r.generation() + ":");
        t.print(out, "  ");
        out.println(r.ok() ? "every file of the index is sound" : "damaged files found:");
        for (IndexCheck.FileResult f : r.files())
          if (!f.ok()) out.println("  " + f.file() + ": " + f.problem());
        if (!r.leftovers().isEmpty()) {
          out.println(r.leftovers().size() + " leftover file(s), not part of the index ("
              + (r.writerRunning() ? "files of the change now running, not committed yet, or " : "")
              + "left by an interrupted or failed change, or put here):");
          out.println(r.writerRunning() ? "do not delete any while that change runs; run check again once it ends"
              : "safe to delete (the index stays as it is) while no add, delete or compact runs on it");
          for (IndexCheck.Leftover f : r.leftovers())
            out.println("  " + f.file() + ": " + f.bytes() + " bytes, " + (!f.removedByWriter()
                ? "never removed by actindex (a name it does not write)"
                : r.writerRunning() ? "the running change's, or removed by the next add, delete or compact"
                : "removed by the next add, delete or compact"));
        }
      }
    }
    out.flush();
    if (r.writerRunning())
      spec.commandLine().getErr().println("note: a writer holds " + index.dir.resolve("writer.lock")
          + " (an add, delete or compact is running on this index): files it has not committed yet are listed as leftovers;"
          + " do not delete them, and run check again once it ends");
    IndexCheck.FileResult bad = r.firstDamaged();
    if (bad != null) throw new BadInputException(bad.problem());
    return ExitCodes.OK;
  }

  /** The status of a file the index does not use. */
  private static final String LEFTOVER = "leftover";
}
