package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.Format;
import io.actindex.cli.format.JsonWriter;
import io.actindex.query.IndexBuilder;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.List;

/** The one-line summaries of {@code build} and {@code add}. */
final class Summaries {
  private Summaries() {}

  /** {@code verb} = "built" or "added to". */
  static void written(PrintWriter out, Format format, String verb, Path dir, IndexBuilder.Result r) {
    String first = Integer.toString(r.firstId()), last = Integer.toString(r.firstId() + r.rows() - 1);
    switch (format) {
      case json -> {
        new JsonWriter(out).beginObject()
            .member("index", dir.toString())
            .member("rows", r.rows())
            .member("first_id", r.firstId())
            .member("layout", r.layout().toString())
            .member("bits", r.layout().bits())
            .endObject();
        out.println();
      }
      case csv -> new CsvWriter(out, List.of("index", "rows", "first_id", "layout", "bits"))
          .row(List.of(dir.toString(), Integer.toString(r.rows()), first, r.layout().toString(),
              Integer.toString(r.layout().bits())));
      case table -> out.println(verb + " " + dir + ": " + r.rows() + " examples (ids " + first + ".." + last + "), layout "
          + r.layout() + " (" + r.layout().bits() + " bits)");
    }
    out.flush();
  }

  /** Problems that did not undo a commit, one line each on stderr. */
  static void warnings(PrintWriter err, List<String> warnings) {
    for (String w : warnings) err.println("warning: " + w.replaceAll("\\p{Cntrl}", " "));
    err.flush();
  }
}
