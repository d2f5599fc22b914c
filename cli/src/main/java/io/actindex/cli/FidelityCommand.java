package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.cli.format.TextTable;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.index.store.IndexReader;
import io.actindex.query.Fidelity;
import io.actindex.query.MetaCsv;
import io.actindex.query.Refine;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/** {@code actindex fidelity}: how well Hamming neighbours on codes agree with float neighbours, on the user's data. */
@Command(name = "fidelity", mixinStandardHelpOptions = true,
    description = {"Measures how faithful the binary codes are to the float activations: for N sampled rows against all other"
        + " rows, the overlap of the Hamming k-NN with the cosine k-NN, Spearman's rank correlation of the two distances over"
        + " random pairs, the share of queries tied at the k-th Hamming distance and, with labels, k-NN label accuracy under"
        + " Hamming, Hamming refined by kept magnitudes, cosine on the floats and Euclidean on the raw inputs.",
        "Give an index (floats: its kept magnitudes, or the model's activations on --inputs, the rows it was built from)"
            + " or an activations file with an optional metadata CSV."})
final class FidelityCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;

  @Option(names = "--index", paramLabel = "DIR", description = "The index folder.")
  Path index;

  @Option(names = "--inputs", paramLabel = "FILE",
      description = "With --index built from a model: the inputs it was built from (id order), for exact float activations and"
          + " Euclidean k-NN on the inputs.")
  Path inputs;

  @Option(names = "--activations", paramLabel = "FILE", description = "Without an index: activations (.npy, .npz or .csv); a unit is on when its activation is > 0.")
  Path activations;

  @Option(names = "--meta", paramLabel = "CSV", description = "With --activations: metadata CSV (one row per example) with a label column.")
  Path meta;

  @Option(names = "--label-column", paramLabel = "NAME", description = "With --meta: the label column. Default: 'label'.")
  String labelColumn;

  @Option(names = "--magnitudes", paramLabel = "BITS", defaultValue = "8",
      description = "With --activations and --meta: bits per unit of the quantised magnitudes the refined k-NN uses (8, 4 or 2)."
          + " Default: ${DEFAULT-VALUE}.")
  int bits;

  @Option(names = "--queries", paramLabel = "N",
      description = "Rows sampled as queries (each against all other rows). Default: " + Fidelity.DEFAULT_QUERIES + " or all rows if fewer.")
  Integer queries;

  @Option(names = "-k", paramLabel = "K", defaultValue = "10", description = "Neighbours per query. Default: ${DEFAULT-VALUE}.")
  int k;

  @Option(names = "--candidates", paramLabel = "C",
      description = "Hamming candidates the refined k-NN re-ranks (ties with the C-th added); needs labels and kept magnitudes."
          + " Default: max(100, K).")
  Integer candidates;

  @Option(names = "--pairs", paramLabel = "P", defaultValue = "" + Fidelity.DEFAULT_PAIRS,
      description = "Random pairs of rows for Spearman's rank correlation. Default: ${DEFAULT-VALUE}.")
  int pairs;

  @Option(names = "--seed", paramLabel = "S", defaultValue = "1", description = "Seed of the samples. Default: ${DEFAULT-VALUE}.")
  long seed;

  @Mixin HeaderOption header;
  @Mixin FormatOption format;
  @Mixin ThreadsOption threads;

  @Override
  public Integer call() {
    if ((index == null) == (activations == null))
      throw new ParameterException(spec.commandLine(), "give exactly one of --index DIR or --activations FILE");
    if (index != null && (meta != null || labelColumn != null))
      throw new ParameterException(spec.commandLine(), "--meta and --label-column go with --activations (an index has its labels)");
    if (index != null)
      GivenOptions.refuse(spec, "goes with --activations; with --index the refined k-NN uses the magnitudes the index keeps (build --magnitudes)",
          "--magnitudes");
    if (activations != null && meta == null)
      GivenOptions.refuse(spec, "is for the refined k-NN label accuracy, which needs labels (--meta)", "--magnitudes", "--candidates");
    if (activations != null && inputs != null)
      throw new ParameterException(spec.commandLine(), "--inputs goes with --index (the rows the index was built from)");
    if (labelColumn != null && meta == null) throw new ParameterException(spec.commandLine(), "--label-column goes with --meta");
    if (k < 1) throw new ParameterException(spec.commandLine(), "-k must be at least 1, got " + k);
    if (queries != null && queries < 1) throw new ParameterException(spec.commandLine(), "--queries must be at least 1, got " + queries);
    if (candidates != null && candidates < k)
      throw new ParameterException(spec.commandLine(), "--candidates must be at least 1 and at least -k (" + k + "), got " + candidates);
    if (pairs < 2 || pairs > Fidelity.MAX_PAIRS)
      throw new ParameterException(spec.commandLine(), "--pairs must be from 2 to " + Fidelity.MAX_PAIRS + " (about a gigabyte of memory), got " + pairs);
    if (bits != 2 && bits != 4 && bits != 8) throw new ParameterException(spec.commandLine(), "--magnitudes must be 8, 4 or 2, got " + bits);
    int c = candidates != null ? candidates : Math.max(Refine.DEFAULT_CANDIDATES, k);
    CsvMatrixReader.Header h = header.of(activations, inputs);
    Fidelity.Result result;
    try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "measuring")) {
      if (index != null) {
        try (IndexReader reader = IndexReader.open(index)) {
          result = run(Fidelity.fromIndex(reader, inputs, h, bar), c, bar);
        }
      } else {
        MetaCsv.Options m = meta == null ? null : new MetaCsv.Options(meta, null, labelColumn, null);
        result = run(Fidelity.fromActivations(activations, h, m, bits, bar), c, bar);
      }
    }
    String note = noLabelNote(result);
    if (note != null) Summaries.notes(spec.commandLine().getErr(), List.of(note));
    PrintWriter out = spec.commandLine().getOut();
    switch (format.format) {
      case json -> json(out, result);
      case csv -> csv(out, result);
      case table -> table(out, result);
    }
    out.flush();
    return ExitCodes.OK;
  }

  private Fidelity.Result run(Fidelity.Data data, int c, Progress bar) {
    Summaries.notes(spec.commandLine().getErr(), data.notes());
    if (GivenOptions.given(spec, "--candidates") && (data.labels() == null || data.kept() == null))
      throw new io.actindex.core.BadInputException("--candidates is for the refined k-NN label accuracy, which needs labels and kept"
          + " magnitudes; " + (data.labels() == null ? "the examples of index " + index + " have no labels" : "index " + index
          + " keeps no magnitudes"));
    int n = data.codes().size();
    int q = queries != null ? queries : Math.min(Fidelity.DEFAULT_QUERIES, n);
    if (q > n)
      throw new io.actindex.core.BadInputException("--queries " + q + " is larger than the " + n + " examples of "
          + (index != null ? "index " + index : activations));
    return Fidelity.run(data, new Fidelity.Params(q, k, c, pairs, seed, threads.resolved()), bar);
  }

  private static void json(PrintWriter out, Fidelity.Result r) {
    JsonWriter j = new JsonWriter(out).beginObject()
        .member("examples", r.examples())
        .member("queries", r.queries())
        .member("k", r.k())
        .member("seed", r.seed())
        .member("floats", r.floatSource())
        .member("magnitude_bits", r.magnitudeBits())
        .member("candidates", r.candidates())
        .member("overlap", r.overlap())
        .member("spearman", r.spearman())
        .member("pairs", r.pairs())
        .member("tied_share", r.tiedShare())
        .member("mean_kth_distance", r.meanKthDistance());
    Fidelity.Accuracy a = r.accuracy();
    if (a == null) j.name("accuracy").nullValue();
    else {
      j.name("accuracy").beginObject().member("labeled", a.labeled()).member("hamming", a.hamming())
          .member("refined", a.refined()).member("cosine", a.cosine()).member("euclidean_inputs", a.euclideanInputs())
          .endObject();
    }
    j.member("verdict", ApiNames.options(r.verdict()));
    j.name("no_labelled_neighbour");
    if (a == null) j.nullValue();
    else {
      Fidelity.NoLabelledNeighbour none = a.noLabelledNeighbour();
      j.beginObject().member("hamming", none.hamming()).member("refined", none.refined()).member("cosine", none.cosine())
          .member("euclidean_inputs", none.euclideanInputs()).endObject();
    }
    j.endObject();
    out.println();
  }

  /**
   * The note on stderr when some labelled queries had no labelled neighbour under some metric (they
   * count as wrong in its accuracy), else null.
   */
  static String noLabelNote(Fidelity.Result r) {
    Fidelity.Accuracy a = r.accuracy();
    if (a == null || !a.noLabelledNeighbour().any()) return null;
    Fidelity.NoLabelledNeighbour none = a.noLabelledNeighbour();
    List<String> per = new ArrayList<>();
    per.add(none.hamming() + " under hamming");
    if (none.refined() != null) per.add(none.refined() + " under refined");
    per.add(none.cosine() + " under cosine");
    if (none.euclideanInputs() != null) per.add(none.euclideanInputs() + " under euclidean_inputs");
    return "note: of the " + a.labeled() + " labelled queries, some have no labelled example among their " + r.k()
        + " nearest (" + String.join(", ", per) + "); each of those counts as wrong in that accuracy";
  }

  /** One line per measure: {@code measure,value}. */
  private static void csv(PrintWriter out, Fidelity.Result r) {
    CsvWriter csv = new CsvWriter(out, List.of("measure", "value"));
    for (String[] row : rows(r, CsvWriter::number)) csv.row(List.of(row[0], row[1]));
  }

  private static void table(PrintWriter out, Fidelity.Result r) {
    out.println("fidelity of codes to " + r.floatSource());
    TextTable t = new TextTable(List.of("measure", "value"));
    for (String[] row : rows(r, FidelityCommand::num)) t.row(List.of(row[0].replace('_', ' '), row[1]));
    t.print(out, "  ");
    out.println();
    out.println(ApiNames.options(r.verdict()));
  }

  /** The measures as (name, text) rows, fractional numbers written by {@code fmt} (4 decimals in the table, full in CSV). */
  private static List<String[]> rows(Fidelity.Result r, java.util.function.DoubleFunction<String> fmt) {
    List<String[]> rows = new ArrayList<>();
    rows.add(new String[] {"examples", Integer.toString(r.examples())});
    rows.add(new String[] {"queries", Integer.toString(r.queries())});
    rows.add(new String[] {"k", Integer.toString(r.k())});
    rows.add(new String[] {"knn_overlap", fmt.apply(r.overlap())});
    rows.add(new String[] {"spearman", fmt.apply(r.spearman())});
    rows.add(new String[] {"pairs", Integer.toString(r.pairs())});
    rows.add(new String[] {"tied_share", fmt.apply(r.tiedShare())});
    rows.add(new String[] {"mean_kth_distance", fmt.apply(r.meanKthDistance())});
    Fidelity.Accuracy a = r.accuracy();
    if (a != null) {
      rows.add(new String[] {"labeled_queries", Integer.toString(a.labeled())});
      rows.add(new String[] {"accuracy_hamming", fmt.apply(a.hamming())});
      rows.add(new String[] {"accuracy_refined", a.refined() == null ? "" : fmt.apply(a.refined())});
      rows.add(new String[] {"accuracy_cosine", fmt.apply(a.cosine())});
      rows.add(new String[] {"accuracy_euclidean_inputs", a.euclideanInputs() == null ? "" : fmt.apply(a.euclideanInputs())});
    }
    rows.add(new String[] {"candidates", Integer.toString(r.candidates())});
    rows.add(new String[] {"magnitude_bits", Integer.toString(r.magnitudeBits())});
    if (a != null) {
      Fidelity.NoLabelledNeighbour none = a.noLabelledNeighbour();
      rows.add(new String[] {"no_labelled_neighbour_hamming", Integer.toString(none.hamming())});
      rows.add(new String[] {"no_labelled_neighbour_refined", none.refined() == null ? "" : Integer.toString(none.refined())});
      rows.add(new String[] {"no_labelled_neighbour_cosine", Integer.toString(none.cosine())});
      rows.add(new String[] {"no_labelled_neighbour_euclidean_inputs",
          none.euclideanInputs() == null ? "" : Integer.toString(none.euclideanInputs())});
    }
    return rows;
  }

  private static String num(double v) {
    return Double.isNaN(v) ? "" : String.format(Locale.ROOT, "%.4f", v);
  }
}
