package io.actindex.cli;

import io.actindex.cli.format.JsonWriter;
import io.actindex.index.store.IndexReader;
import io.actindex.query.EdgeExport;
import io.actindex.query.OodCalibration;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.Locale;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/** {@code actindex export-edge}: the index's unique codes, OOD calibration and optional model as one bundle file (and C source). */
@Command(name = "export-edge", mixinStandardHelpOptions = true,
    description = {"Writes one bundle file for devices: the code layout, the unique live codes with their counts, the OOD calibration "
        + "(run 'ood calibrate' first) and, with --with-model, the MLP weights. The actindex-edge jar (JDK only) reads it.",
        "With --c-source DIR also writes the same as C99 source (actindex_edge.h, actindex_edge.c)."})
final class ExportEdgeCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;

  @Option(names = "--out", required = true, paramLabel = "FILE", description = "The bundle file to write (replaced atomically).")
  Path out;

  @Option(names = "--with-model", description = "Include the index's model so the device can score raw inputs.")
  boolean withModel;

  @Option(names = "--c-source", paramLabel = "DIR", description = "Also write the bundle as C99 source into DIR.")
  Path cSource;

  @Mixin FormatOption format;

  @Override
  public Integer call() {
    EdgeExport.Result r;
    try (IndexReader reader = IndexReader.open(index.dir)) {
      r = EdgeExport.run(reader, new EdgeExport.Params(out, withModel, cSource));
    }
    PrintWriter o = spec.commandLine().getOut();
    switch (format.format) {
      case json -> {
        JsonWriter j = new JsonWriter(o).beginObject().member("bundle", r.out().toString()).member("bytes", r.bytes())
            .member("unique_codes", r.uniqueCodes()).member("examples", r.examples()).member("bytes_per_example", r.bytesPerExample())
            .name("with_model").value(r.withModel()).name("c_files").beginArray();
        for (Path p : r.cFiles()) j.value(p.toString());
        j.endArray().member("caution", OodCalibration.CAUTION).name("range_bounds");
        if (r.rangeBounds() == null) j.nullValue();
        else {
          j.beginArray();
          for (double v : r.rangeBounds()) j.value(v);
          j.endArray();
        }
        j.endObject();
        o.println();
      }
      case csv -> {
        o.println("bundle,bytes,unique_codes,examples,bytes_per_example,with_model,range_guard");
        o.println(io.actindex.cli.format.CsvWriter.field(r.out().toString()) + "," + r.bytes() + "," + r.uniqueCodes() + "," + r.examples() + ","
            + r.bytesPerExample() + "," + r.withModel() + "," + (r.rangeBounds() != null));
      }
      case table -> {
        o.println("wrote " + r.out() + ": " + Units.bytes(r.bytes()) + ", " + r.uniqueCodes() + " unique codes of " + r.examples()
            + " examples (" + String.format(Locale.ROOT, "%.2f", r.bytesPerExample()) + " bytes per example)" + (r.withModel() ? ", with the model" : "")
            + (r.rangeBounds() != null ? " and a range guard" : ""));
        for (Path p : r.cFiles()) o.println("wrote " + p);
      }
    }
    OodCommand.caution(o, spec.commandLine().getErr(), format.format);
    o.flush();
    Summaries.notes(spec.commandLine().getErr(), r.notes());
    OodCommand.liveNote(spec.commandLine().getErr(), r.liveCheck()); // the bundle carries the calibration as stored
    return ExitCodes.OK;
  }
}
