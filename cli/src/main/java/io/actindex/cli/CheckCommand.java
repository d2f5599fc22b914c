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
    description = {"Verifies every byte of every file of an index: each file's CRC32, every hash-table key",
        "against its codes, and the checksum of every metadata (Lucene) file. Reports per file; exits 2,",
        "naming the first damaged file, if any is damaged. Never writes."})
final class CheckCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin FormatOption format;

  @Override
  public Integer call() {
    IndexCheck.Report r = Check.run(new Check.Params(index.dir));
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
        j.endArray().endObject();
        out.println();
      }
      case csv -> {
        CsvWriter csv = new CsvWriter(out, List.of("file", "bytes", "ok", "problem"));
        for (IndexCheck.FileResult f : r.files())
          csv.row(List.of(f.file(), Long.toString(f.bytes()), Boolean.toString(f.ok()), f.problem() == null ? "" : f.problem()));
      }
      case table -> {
        TextTable t = new TextTable(List.of("file", "bytes", "status"));
        for (IndexCheck.FileResult f : r.files())
          t.row(List.of(f.file(), f.file().equals("index") ? "" : Long.toString(f.bytes()), f.status()));
        out.println("index " + index.dir + ", generation " + r.generation() + ":");
        t.print(out, "  ");
        out.println(r.ok() ? "every file is sound" : "damaged files found:");
        for (IndexCheck.FileResult f : r.files())
          if (!f.ok()) out.println("  " + f.file() + ": " + f.problem());
      }
    }
    out.flush();
    IndexCheck.FileResult bad = r.firstDamaged();
    if (bad != null) throw new BadInputException(bad.problem());
    return ExitCodes.OK;
  }
}
