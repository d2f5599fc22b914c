package io.actindex.cli;

import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.index.store.IndexReader;
import io.actindex.query.QueryCodes;
import io.actindex.query.QuerySource;
import io.actindex.query.RowRange;
import io.actindex.query.Snippet;
import io.actindex.query.Source;
import java.nio.file.Path;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * Mixin: the queries of {@code nearest} and {@code region}, encoded the way the index was built:
 * activations, codes, or model inputs (when the index stores its model), and which rows to use.
 */
public final class QuerySourceOptions {
  @Spec(Spec.Target.MIXEE) CommandSpec mixee;

  @Option(names = "--activations", paramLabel = "FILE", description = "Query activations (.npy, .npz or .csv).")
  Path activations;

  @Option(names = "--codes", paramLabel = "FILE", description = "Query codes (.npy of bool, 0/1 in any integer or float dtype, or uint8 packed bits).")
  Path codes;

  @Option(names = "--inputs", paramLabel = "FILE",
      description = "Query inputs, run through the model stored in the index (built with --model).")
  Path inputs;

  @Option(names = "--header", paramLabel = "yes|no|auto", defaultValue = "auto",
      description = "Whether the first line of a CSV query file (--activations, --inputs) is a header; refused with other files. "
          + HeaderOption.AUTO_RULE)
  String header;

  @Option(names = "--rows", paramLabel = "A:B",
      description = "Only rows A (inclusive) to B (exclusive), 0-based; A: and :B leave one end open; a single number picks one row.")
  String rows;

  void check() {
    int given = (activations != null ? 1 : 0) + (codes != null ? 1 : 0) + (inputs != null ? 1 : 0);
    if (given != 1)
      throw new ParameterException(mixee.commandLine(),
          "give exactly one query source: --activations FILE, --codes FILE or --inputs FILE");
    GivenOptions.refuseUnlessCsv(mixee, "--header", activations != null ? activations : codes != null ? codes : inputs);
  }

  /** The query source, after {@link #check}. */
  Source toSource() {
    CsvMatrixReader.Header h = CsvMatrixReader.parseHeader(header);
    if (activations != null) return Source.activations(activations).withHeader(h);
    if (codes != null) return Source.codes(codes);
    return Source.inputs(inputs, null).withHeader(h);
  }

  /** The rows to use (all when --rows is absent). */
  RowRange range() {
    return RowRange.parse(rows);
  }

  /** The query codes and activations (for refinement), with a progress bar on a terminal. */
  QuerySource.Queries loadWithActivations(IndexReader reader) {
    QuerySource.Queries q;
    try (Progress bar = Progress.onTerminal(mixee.commandLine().getErr(), "encoding queries")) {
      q = QuerySource.loadWithActivations(reader, toSource(), range(), bar);
    }
    printNotes(q.codes());
    return q;
  }

  /**
   * The query codes, encoded as the index was built, with a progress bar on a terminal; how the
   * file was read (e.g. the CSV header decision) goes to stderr.
   */
  QueryCodes load(IndexReader reader) {
    QueryCodes q;
    try (Progress bar = Progress.onTerminal(mixee.commandLine().getErr(), "encoding queries")) {
      q = QuerySource.load(reader, toSource(), range(), bar);
    }
    printNotes(q);
    return q;
  }

  /** How the file was read, on stderr; and a note when it holds no rows. */
  private void printNotes(QueryCodes q) {
    Summaries.notes(mixee.commandLine().getErr(), q.notes());
    noteIfEmpty(q.codes().size());
  }

  /**
   * A note on stderr when no query row was read (else the answer is silently empty): the file holds
   * none, or {@code --rows} selects none of it ({@code 5:5}; a range past the file's end is refused).
   */
  void noteIfEmpty(int rows) {
    RowRange range = range();
    if (rows == 0) mixee.commandLine().getErr().println("note: " + (range.to() == range.from() ? "--rows " + Snippet.of(this.rows) + " selects no row of "
        + toSource().file() : toSource().file() + " holds no rows") + "; the answer is empty");
    mixee.commandLine().getErr().flush();
  }
}
