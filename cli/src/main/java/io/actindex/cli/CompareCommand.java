package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.cli.format.TextTable;
import io.actindex.core.BadInputException;
import io.actindex.core.CodeLayout;
import io.actindex.encode.BinarizeRule;
import io.actindex.encode.EncodeOptions;
import io.actindex.query.Compare;
import io.actindex.query.Source;
import io.actindex.query.stats.LinearMmd;
import io.actindex.query.stats.Wasserstein;
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

/** {@code actindex compare}: two samples compared in code space, per layer and per neuron, with a float reference. */
@Command(name = "compare", mixinStandardHelpOptions = true,
    description = {"Two samples of inputs compared where the model looks: kernel MMD^2 between their codes with a"
        + " permutation p-value, Wasserstein-2 with Hamming ground cost, a per-layer breakdown, the neurons whose"
        + " firing rates differ most (Benjamini-Hochberg corrected), and with float activations the Frechet"
        + " distance and Gaussian-kernel MMD^2 beside them. A statistical signal, not a guarantee."})
final class CompareCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;

  @Option(names = "--a", paramLabel = "FILE", description = "Sample A (the reference): a file of --kind.")
  Path a;

  @Option(names = "--b", paramLabel = "FILE", description = "Sample B: a file of --kind.")
  Path b;

  @Option(names = "--a-where", paramLabel = "EXPR", description = "Sample A = the indexed examples matching EXPR (needs --index).")
  String aWhere;

  @Option(names = "--b-where", paramLabel = "EXPR", description = "Sample B = the indexed examples matching EXPR (needs --index).")
  String bWhere;

  @Option(names = "--index", paramLabel = "DIR",
      description = "An index: files are encoded the way it was built, and --a-where/--b-where select from it.")
  Path index;

  @Option(names = "--kind", paramLabel = "KIND", defaultValue = "activations",
      description = "What --a and --b hold: activations (.npy, .npz, .csv), codes (.npy of 0/1 or packed bits) or inputs (run through --model or the index's model). Default: ${DEFAULT-VALUE}, inputs with --model; with --index, what the index was built from (for a model's index, inputs or hidden activations by the file's width).")
  Source.Kind kind;

  @Option(names = "--model", paramLabel = "FILE", description = "MLP (safetensors) that --a and --b (model inputs: --kind inputs, the default with --model) are run through, without an index.")
  Path model;

  @Option(names = "--threshold", paramLabel = "T", description = "Without an index: a neuron is on when its activation is > T (default: > 0).")
  Double threshold;

  @Option(names = "--median", description = "Without an index: a neuron is on above its median over sample A.")
  boolean median;

  @Option(names = "--code-layout", paramLabel = "LAYOUT", description = "Layer names and widths of codes files, e.g. h1:64,h2:32.")
  String codeLayout;

  @Option(names = "--a-floats", paramLabel = "FILE", description = "Float activations of A for the full-precision reference (default: --a itself when it holds activations).")
  Path aFloats;

  @Option(names = "--b-floats", paramLabel = "FILE", description = "Float activations of B for the full-precision reference.")
  Path bFloats;

  @Mixin LayersOption layers;
  @Mixin HeaderOption header;

  @Option(names = "--permutations", paramLabel = "P", defaultValue = "1000", description = "Relabelings of the permutation tests. Default: ${DEFAULT-VALUE}.")
  int permutations;

  @Option(names = "--seed", paramLabel = "S", defaultValue = "42", description = "Seed of the relabelings and subsamples. Default: ${DEFAULT-VALUE}.")
  long seed;

  @Option(names = "--sigma", paramLabel = "S", description = "Bandwidth of the exponential code kernel exp(-d/S), in bits. Default: the median pairwise distance.")
  Double sigma;

  @Option(names = "--alpha", paramLabel = "A", defaultValue = "0.05", description = "Level of the verdict and of the neuron false discovery rate. Default: ${DEFAULT-VALUE}.")
  double alpha;

  @Option(names = "--top", paramLabel = "N", defaultValue = "10", description = "Neurons listed, largest |z| first. Default: ${DEFAULT-VALUE}.")
  int top;

  @Option(names = "--matrix-rows", paramLabel = "N", defaultValue = "2000",
      description = "At most N rows per sample in the pairwise matrices (exponential and Gaussian kernels); a seeded random subsample beyond. Default: ${DEFAULT-VALUE}.")
  int matrixRows;

  @Option(names = "--exact-max", paramLabel = "N", defaultValue = "3000", description = "Exact W2 for equal sample sizes up to N rows, else Sinkhorn. Default: ${DEFAULT-VALUE}.")
  int exactMax;

  @Option(names = "--sinkhorn-rows", paramLabel = "N", defaultValue = "4000", description = "At most N rows per sample for Sinkhorn (seeded subsample beyond). Default: ${DEFAULT-VALUE}.")
  int sinkhornRows;

  @Option(names = "--reg", paramLabel = "R", defaultValue = "0.05", description = "Sinkhorn regularisation as a fraction of the mean squared distance. Default: ${DEFAULT-VALUE}.")
  double reg;

  @Option(names = "--max-iter", paramLabel = "N", defaultValue = "1000", description = "Sinkhorn iterations at most. Default: ${DEFAULT-VALUE}.")
  int maxIter;

  @Option(names = "--tol", paramLabel = "T", defaultValue = "1e-5", description = "Sinkhorn stops when the marginals are within T (L1; above 0, below 2). Default: ${DEFAULT-VALUE}.")
  double tol;

  @Mixin FormatOption format;
  @Mixin ThreadsOption threads;

  @Override
  public Integer call() {
    EmptyFilter.refuse(spec, "--a-where", aWhere, "give a filter, or sample A as --a FILE");
    EmptyFilter.refuse(spec, "--b-where", bWhere, "give a filter, or sample B as --b FILE");
    if ((a == null) == (aWhere == null)) throw new ParameterException(spec.commandLine(), "give sample A as --a FILE or --a-where EXPR (one of them)");
    if ((b == null) == (bWhere == null)) throw new ParameterException(spec.commandLine(), "give sample B as --b FILE or --b-where EXPR (one of them)");
    if (index == null && (aWhere != null || bWhere != null)) throw new ParameterException(spec.commandLine(), "--a-where and --b-where need --index");
    if (index != null && (threshold != null || median || model != null || codeLayout != null))
      throw new ParameterException(spec.commandLine(), "with --index, files are encoded as the index was built: drop --threshold, --median, --model and --code-layout");
    if (threshold != null && median) throw new ParameterException(spec.commandLine(), "give --threshold or --median, not both");
    if (model != null && !GivenOptions.given(spec, "--kind")) kind = Source.Kind.INPUTS; // files run through a model hold its inputs
    if (model != null && kind != Source.Kind.INPUTS) throw new ParameterException(spec.commandLine(), "--model goes with --kind inputs");
    if (codeLayout != null && kind != Source.Kind.CODES) throw new ParameterException(spec.commandLine(), "--code-layout goes with --kind codes");
    if ((threshold != null || median) && kind == Source.Kind.CODES)
      throw new ParameterException(spec.commandLine(), "--threshold and --median binarize activations; --kind codes is binary already");
    if (permutations < 1) throw new BadInputException("--permutations must be at least 1, got " + permutations);
    if (threshold != null && !Double.isFinite(threshold)) throw new BadInputException("--threshold must be a finite number");
    EncodeOptions enc = median ? new EncodeOptions(BinarizeRule.MEDIAN, 0, null)
        : threshold != null ? new EncodeOptions(BinarizeRule.THRESHOLD, threshold, null) : EncodeOptions.positive();
    CodeLayout layout = null;
    if (codeLayout != null) {
      try {
        layout = CodeLayout.parseTyped(codeLayout);
      } catch (IllegalArgumentException e) {
        throw new BadInputException("--code-layout: " + e.getMessage());
      }
    }
    Compare.Options o = new Compare.Options(permutations, seed, sigma, alpha, top, matrixRows, exactMax, sinkhornRows, reg,
        maxIter, tol, threads.resolved());
    Compare.Params p = new Compare.Params(index, sample(a, aWhere), sample(b, bWhere), enc, layout, model, aFloats, bFloats,
        layers.layers, o, header.of(a, b, aFloats, bFloats));
    Compare.Result r;
    try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "comparing (rows read, then W2 iterations)")) {
      r = Compare.run(p, bar);
    }
    noteUnusedW2Options(r);
    PrintWriter out = spec.commandLine().getOut();
    switch (format.format) {
      case json -> json(out, r);
      case csv -> csv(out, r);
      case table -> table(out, r);
    }
    out.flush();
    return ExitCodes.OK;
  }

  /**
   * Which W2 method runs depends on the samples' sizes, known only once they are read, so W2 options
   * typed for the other method are not refused (the same command line may take the other method on
   * the next batch) but named in one stderr line.
   */
  private void noteUnusedW2Options(Compare.Result r) {
    Wasserstein.Result w = r.w2();
    PrintWriter err = spec.commandLine().getErr();
    if (w.method() == Wasserstein.Method.EXACT) {
      List<String> unused = new ArrayList<>();
      for (String o : List.of("--sinkhorn-rows", "--reg", "--max-iter", "--tol")) if (GivenOptions.given(spec, o)) unused.add(o);
      if (!unused.isEmpty())
        err.println("note: " + String.join(", ", unused) + " not used: W2 is exact here (both samples have " + w.rowsA()
            + " rows, at most --exact-max " + exactMax + "); they apply to Sinkhorn only");
    } else if (GivenOptions.given(spec, "--exact-max") && r.rowsA() != r.rowsB()) {
      err.println("note: --exact-max not used: the exact W2 needs samples of equal sizes, and A has " + r.rowsA() + " rows, B "
          + r.rowsB() + "; W2 is Sinkhorn");
    }
    err.flush();
  }

  private Compare.Sample sample(Path file, String where) {
    if (file == null) return Compare.Sample.where(where);
    // with an index and no --kind: the kind the index was built from (a model's index: inputs or hidden activations, by width)
    if (index != null && !GivenOptions.given(spec, "--kind")) return Compare.Sample.fileOfIndexKind(file);
    return Compare.Sample.file(new Source(kind, file, null));
  }

  private static void json(PrintWriter out, Compare.Result r) {
    JsonWriter j = new JsonWriter(out).beginObject();
    j.name("a").beginObject().member("source", r.describeA()).member("rows", r.rowsA()).endObject();
    j.name("b").beginObject().member("source", r.describeB()).member("rows", r.rowsB()).endObject();
    j.member("layout", r.layout().toString()).member("bits", r.layout().bits());
    j.name("mmd").beginArray();
    for (Compare.Mmd m : r.mmd()) mmd(j, m);
    j.endArray();
    j.name("linear_mmd");
    LinearMmd.Result lin = r.linear();
    if (lin == null) j.nullValue();
    else j.beginObject().member("kernel", "exponential").member("mmd2", lin.mmd2()).member("z", lin.z())
        .member("p_value", lin.pValue()).member("pairs", lin.pairs()).endObject();
    Wasserstein.Result w = r.w2();
    j.name("w2").beginObject().member("method", w.method().name().toLowerCase(Locale.ROOT)).member("w2", w.w2())
        .member("rows_a", w.rowsA()).member("rows_b", w.rowsB());
    if (w.method() == Wasserstein.Method.SINKHORN)
      j.member("epsilon", w.epsilon()).member("relative_epsilon", w.relativeEpsilon()).member("iterations", w.iterations())
          .member("marginal_error", w.marginalError()).name("converged").value(w.converged());
    j.endObject();
    j.name("floats");
    if (r.floats() == null) j.nullValue();
    else {
      Compare.Floats f = r.floats();
      j.beginObject().member("rows_a", f.rowsA()).member("rows_b", f.rowsB()).member("columns", f.columns())
          .member("frechet", f.frechet()).name("mmd");
      mmd(j, f.mmd());
      j.endObject();
    }
    j.member("floats_absent", ApiNames.options(r.floatsAbsent()));
    j.name("layers").beginArray();
    for (Compare.Layer l : r.layers())
      j.beginObject().member("layer", l.name()).member("bits", l.bits()).member("agreement_mmd2", l.agreementMmd2())
          .member("agreement_p_value", l.agreementP()).member("exponential_mmd2", l.exponentialMmd2()).member("sigma", l.sigma())
          .member("mean_abs_rate_diff", l.meanAbsRateDiff()).member("neurons_moved", l.neuronsMoved()).endObject();
    j.endArray();
    j.member("correction", r.correction()).member("alpha", r.alpha()).member("neurons_moved", r.neuronsMoved());
    j.name("neurons").beginArray();
    for (Compare.Neuron n : r.neurons())
      j.beginObject().member("neuron", n.name()).member("rate_a", n.rateA()).member("rate_b", n.rateB()).member("z", n.z())
          .member("p_value", n.p()).member("q_value", n.q()).endObject();
    j.endArray();
    j.member("verdict", r.verdict()).name("notes").beginArray();
    for (String s : r.notes()) j.value(ApiNames.options(s));
    j.endArray().endObject();
    out.println();
  }

  private static void mmd(JsonWriter j, Compare.Mmd m) {
    j.beginObject().member("kernel", m.kernel()).name("sigma");
    if (m.sigma() == null) j.nullValue();
    else j.value(m.sigma().doubleValue());
    j.member("mmd2", m.mmd2()).member("p_value", m.pValue()).member("permutations", m.permutations())
        .member("null_mean", m.nullMean()).member("null_sd", m.nullSd()).member("rows_a", m.rowsA()).member("rows_b", m.rowsB())
        .name("subsampled").value(m.subsampled()).endObject();
  }

  /** CSV: one line per statistic (scope, statistic, value, p_value, detail). */
  private static void csv(PrintWriter out, Compare.Result r) {
    CsvWriter csv = new CsvWriter(out, List.of("scope", "statistic", "value", "p_value", "detail"));
    for (Compare.Mmd m : r.mmd()) csv.row(List.of("codes", "mmd2_" + m.kernel(), num(m.mmd2()), num(m.pValue()), mmdDetail(m)));
    if (r.linear() != null)
      csv.row(List.of("codes", "mmd2_linear_exponential", num(r.linear().mmd2()), num(r.linear().pValue()), r.linear().pairs() + " pairs"));
    csv.row(List.of("codes", "w2", num(r.w2().w2()), "", w2Detail(r.w2())));
    if (r.floats() != null) {
      csv.row(List.of("floats", "frechet", num(r.floats().frechet()), "", r.floats().columns() + " columns"));
      csv.row(List.of("floats", "mmd2_gaussian", num(r.floats().mmd().mmd2()), num(r.floats().mmd().pValue()), mmdDetail(r.floats().mmd())));
    }
    for (Compare.Layer l : r.layers()) {
      csv.row(List.of("layer " + l.name(), "mmd2_agreement", num(l.agreementMmd2()), num(l.agreementP()), l.bits() + " bits"));
      csv.row(List.of("layer " + l.name(), "mmd2_exponential", num(l.exponentialMmd2()), "", "sigma " + num(l.sigma())));
    }
    for (Compare.Neuron n : r.neurons())
      csv.row(List.of("neuron " + n.name(), "z", num(n.z()), num(n.p()), "rate_a " + num(n.rateA()) + " rate_b " + num(n.rateB()) + " q " + num(n.q())));
  }

  private static String num(double x) {
    return CsvWriter.number(x);
  }

  private static String mmdDetail(Compare.Mmd m) {
    return (m.sigma() == null ? "" : "sigma " + fmt(m.sigma()) + ", ") + m.permutations() + " permutations on " + m.rowsA() + " + "
        + m.rowsB() + " rows" + (m.subsampled() ? " (subsample)" : "");
  }

  private static String w2Detail(Wasserstein.Result w) {
    if (w.method() == Wasserstein.Method.EXACT) return "exact assignment, " + w.rowsA() + " + " + w.rowsB() + " rows";
    return String.format(Locale.ROOT, "Sinkhorn, epsilon %s (%s x mean d^2), %d iterations, marginal error %s%s, %d + %d rows",
        fmt(w.epsilon()), fmt(w.relativeEpsilon()), w.iterations(), fmt(w.marginalError()), w.converged() ? "" : " (not converged)",
        w.rowsA(), w.rowsB());
  }

  private static String fmt(double x) {
    return String.format(Locale.ROOT, "%.4g", x);
  }

  private static void table(PrintWriter out, Compare.Result r) {
    out.println("A: " + r.describeA() + " (" + r.rowsA() + " rows)");
    out.println("B: " + r.describeB() + " (" + r.rowsB() + " rows)");
    out.println("codes: " + r.layout() + " (" + r.layout().bits() + " bits)");
    out.println();
    out.println("in code space:");
    TextTable t = new TextTable(List.of("statistic", "value", "p-value", "how"));
    for (Compare.Mmd m : r.mmd())
      t.row(List.of("MMD^2 " + m.kernel() + (m.kernel().equals("agreement") ? " (1 - d/L)" : " (exp(-d/sigma))"), fmt(m.mmd2()),
          fmt(m.pValue()), mmdDetail(m)));
    if (r.linear() != null)
      t.row(List.of("MMD^2 exponential, linear-time", fmt(r.linear().mmd2()), fmt(r.linear().pValue()),
          "all rows, " + r.linear().pairs() + " pairs, " + (Double.isNaN(r.linear().z()) ? "every pair equal: exact sign-flip p" : "Student's t null, " + (r.linear().pairs() - 1) + " df")));
    t.row(List.of("W2 (bits)", fmt(r.w2().w2()), "", w2Detail(r.w2())));
    t.print(out, "  ");
    out.println();
    if (r.floats() != null) {
      Compare.Floats f = r.floats();
      out.println("in full precision (" + f.columns() + " float columns, " + f.rowsA() + " + " + f.rowsB() + " rows):");
      TextTable ft = new TextTable(List.of("statistic", "value", "p-value", "how"));
      ft.row(List.of("Frechet distance^2", fmt(f.frechet()), "", "Gaussian fits"));
      ft.row(List.of("MMD^2 gaussian", fmt(f.mmd().mmd2()), fmt(f.mmd().pValue()), mmdDetail(f.mmd())));
      ft.print(out, "  ");
    } else {
      out.println("in full precision: " + ApiNames.options(r.floatsAbsent()));
    }
    out.println();
    out.println("per layer:");
    TextTable lt = new TextTable(List.of("layer", "bits", "MMD^2 agreement", "p-value", "MMD^2 exponential", "sigma", "mean |rate A - rate B|",
        "neurons moved"));
    for (Compare.Layer l : r.layers())
      lt.row(List.of(l.name(), Integer.toString(l.bits()), fmt(l.agreementMmd2()), fmt(l.agreementP()), fmt(l.exponentialMmd2()),
          fmt(l.sigma()), fmt(l.meanAbsRateDiff()), Integer.toString(l.neuronsMoved())));
    lt.print(out, "  ");
    out.println();
    out.println("neurons whose firing rates differ most (" + r.neuronsMoved() + " with q < " + fmt(r.alpha()) + "; " + r.correction() + "):");
    TextTable nt = new TextTable(List.of("neuron", "rate A", "rate B", "z", "p-value", "q-value"));
    for (Compare.Neuron n : r.neurons())
      nt.row(List.of(n.name(), Units.rate(n.rateA()), Units.rate(n.rateB()), String.format(Locale.ROOT, "%.2f", n.z()), fmt(n.p()), fmt(n.q())));
    nt.print(out, "  ");
    List<String> notes = new ArrayList<>(r.notes());
    if (!notes.isEmpty()) {
      out.println();
      for (String s : notes) out.println("note: " + ApiNames.options(s));
    }
    out.println();
    out.println("verdict: " + r.verdict());
  }
}
