package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.index.store.IndexReader;
import io.actindex.query.CodeExport;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.Locale;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/** {@code actindex export-codes}: the live examples' codes (and optionally ids, keys and kept magnitudes) as files NumPy reads. */
@Command(name = "export-codes", mixinStandardHelpOptions = true,
    description = {"Writes the codes of the index's live examples, in id order, as a .npy file: uint8 0/1 of shape (rows, bits), "
        + "column i = bit i of the layers.",
        "With --packed, uint8 of shape (rows, ceil(bits/8)), eight bits a byte in NumPy's packbits order (first bit in the most "
        + "significant bit): what 'build --codes FILE --code-layout ...' reads back. --layers keeps only those layers' bits, in the order named. Existing files are replaced atomically."})
final class ExportCodesCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;

  @Option(names = "--out", required = true, paramLabel = "FILE.npy", description = "The codes file to write (replaced atomically).")
  Path out;

  @Option(names = "--packed", description = "Pack eight bits a byte in NumPy's packbits order (big-endian within a byte). Default: one byte 0/1 per bit.")
  boolean packed;

  @Mixin LayersOption layers;

  @Option(names = "--where", paramLabel = "EXPR", description = "Only examples whose metadata match, as in 'nearest --where'.")
  String where;

  @Option(names = "--ids", paramLabel = "FILE.csv", description = "Also write one row per exported example: id,key (with a header line).")
  Path ids;

  @Option(names = "--magnitudes", paramLabel = "FILE.npy",
      description = "Also write the kept activation magnitudes, dequantised, as float32 (rows, bits) in the same rows and columns "
          + "(an index that keeps none is refused).")
  Path magnitudes;

  @Mixin FormatOption format;

  @Override
  public Integer call() {
    EmptyFilter.refuse(spec, where);
    CodeExport.Result r;
    try (IndexReader reader = IndexReader.open(index.dir);
        Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "exporting")) {
      r = CodeExport.run(reader, new CodeExport.Params(out, packed, layers.layers, where, ids, magnitudes), bar);
    }
    String kind = r.packed() ? "packed bits" : "0/1";
    PrintWriter o = spec.commandLine().getOut();
    switch (format.format) {
      case json -> {
        JsonWriter j = new JsonWriter(o).beginObject().member("codes", r.out().toString()).member("rows", r.rows()).member("bits", r.bits())
            .name("packed").value(r.packed()).name("layers").beginArray();
        for (String l : r.layers()) j.value(l);
        j.endArray().member("ids", name(r.ids())).member("magnitudes", name(r.magnitudes())).endObject();
        o.println();
      }
      case csv -> {
        o.println("codes,rows,bits,packed,layers,ids,magnitudes");
        o.println(CsvWriter.field(r.out().toString()) + "," + r.rows() + "," + r.bits() + "," + r.packed() + ","
            + CsvWriter.field(String.join(";", r.layers())) + "," + CsvWriter.field(name(r.ids())) + "," + CsvWriter.field(name(r.magnitudes())));
      }
      case table -> {
        o.println(String.format(Locale.ROOT, "wrote %s: %,d rows x %,d bits (%s, uint8), layers %s", r.out(), r.rows(), r.bits(), kind,
            String.join(",", r.layers())));
        if (r.ids() != null) o.println("wrote " + r.ids() + ": id,key of each row");
        if (r.magnitudes() != null) o.println("wrote " + r.magnitudes() + ": kept magnitudes (float32), same rows and columns");
      }
    }
    o.flush();
    Summaries.notes(spec.commandLine().getErr(), r.notes());
    return ExitCodes.OK;
  }

  private static String name(Path p) {
    return p == null ? null : p.toString();
  }
}
