package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.Format;
import io.actindex.cli.format.JsonWriter;
import io.actindex.query.IndexBuilder;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.List;

/** The one-line summaries of {@code build} and {@code add}; notes and warnings on stderr. */
final class Summaries {
  private Summaries() {}

  /**
   * {@code verb} = "built" or "added to". How the source was read ({@link IndexBuilder.Result#notes()}:
   * CSV header, a model's layer order, code layers and output layer) goes to {@code err} in table
   * and CSV formats, and into the JSON document ({@code notes}, and for a model {@code layer_order},
   * {@code code_layers}, {@code output_layer}).
   */
  static void written(PrintWriter out, PrintWriter err, Format format, String verb, Path dir, IndexBuilder.Result r) {
    String first = Integer.toString(r.firstId()), last = Integer.toString(r.firstId() + r.rows() - 1);
    if (format != Format.json) notes(err, r.notes());
    switch (format) {
      case json -> {
        JsonWriter j = new JsonWriter(out).beginObject()
            .member("index", dir.toString())
            .member("rows", r.rows())
            .member("first_id", r.firstId())
            .member("layout", r.layout().toString())
            .member("bits", r.layout().bits());
        if (r.magnitudes() == null) j.name("magnitudes").nullValue();
        else j.name("magnitudes").beginObject()
            .member("bits", r.magnitudes().bits())
            .member("bytes_per_example", r.magnitudes().bytesPerExample())
            .member("max_abs_error", r.magnitudes().maxAbsError())
            .member("rms_error", r.magnitudes().rmsError())
            .member("relative_rms_error", r.magnitudes().relativeRmsError())
            .endObject();
        if (r.encode() != null && r.encode().layerOrder() != null) {
          List<String> order = r.encode().layerOrder();
          strings(j.name("layer_order"), order);
          strings(j.name("code_layers"), r.layout().segments().stream().map(s -> s.name()).toList());
          j.name("output_layer");
          if (r.encode().outputLayer()) j.value(order.getLast());
          else j.nullValue();
        }
        strings(j.name("notes"), ApiNames.options(r.notes()));
        j.endObject();
        out.println();
      }
      case csv -> new CsvWriter(out, List.of("index", "rows", "first_id", "layout", "bits"))
          .row(List.of(dir.toString(), Integer.toString(r.rows()), first, r.layout().toString(),
              Integer.toString(r.layout().bits())));
      case table -> {
        out.println(verb + " " + dir + ": " + r.rows() + " examples (ids " + first + ".." + last + "), layout "
            + r.layout() + " (" + r.layout().bits() + " bits)");
        IndexBuilder.Quantisation q = r.magnitudes();
        if (q != null)
          out.printf(java.util.Locale.ROOT, "kept magnitudes: %d bits per unit, %d bytes per example; against float32: largest error %.3g,"
              + " RMS error %.3g (%.2f%% of the values' RMS)%n", q.bits(), q.bytesPerExample(), q.maxAbsError(), q.rmsError(),
              100 * q.relativeRmsError());
      }
    }
    out.flush();
  }

  private static void strings(JsonWriter j, List<String> values) {
    j.beginArray();
    for (String v : values) j.value(v);
    j.endArray();
  }

  /**
   * How input files were read (a CSV header taken, an index column, layers read side by side...),
   * one line each on stderr: every command that reads a query file prints its notes this way.
   */
  static void notes(PrintWriter err, List<String> notes) {
    for (String n : notes) err.println(ApiNames.options(n));
    err.flush();
  }

  /** Problems that did not undo a commit, one line each on stderr. */
  static void warnings(PrintWriter err, List<String> warnings) {
    for (String w : warnings) err.println("warning: " + ApiNames.options(w).replaceAll("\\p{Cntrl}", " "));
    err.flush();
  }
}
