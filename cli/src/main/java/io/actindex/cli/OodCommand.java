package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.Format;
import io.actindex.cli.format.JsonWriter;
import io.actindex.cli.format.TextTable;
import io.actindex.core.BadInputException;
import io.actindex.core.OutputFiles;
import io.actindex.edge.EdgeBundle.Calibration;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.index.store.IndexReader;
import io.actindex.query.BuildInfo;
import io.actindex.query.OodCalibrate;
import io.actindex.query.OodCalibration;
import io.actindex.query.OodEval;
import io.actindex.query.OodScorer;
import io.actindex.query.OodScore;
import io.actindex.query.QueryCodes;
import io.actindex.query.QuerySource;
import io.actindex.query.RocMetrics;
import io.actindex.query.RowRange;
import io.actindex.query.SoftmaxBaseline;
import io.actindex.query.Source;
import io.actindex.query.report.EvalPage;
import java.io.IOException;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
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

/** {@code actindex ood calibrate|score|eval}: out-of-distribution scores, calibration and evaluation. */
@Command(name = "ood", mixinStandardHelpOptions = true, synopsisSubcommandLabel = "COMMAND",
    description = {"Out-of-distribution flags from the distance of an input's code to its k nearest training codes.",
        "calibrate: store a threshold from held-out in-distribution inputs; score: score and flag inputs; "
            + "eval: AUROC and FPR at 95%% TPR on in and out inputs, beside float and softmax baselines.",
        "The code and refined scores do not see how large the activations are: an input far outside the training range can score like an "
            + "ordinary one; the euclidean score, the default when the index keeps magnitudes, does (docs/commands/ood.md, far inputs).",
        "A calibrated heuristic, not a guarantee (see the caution in every output)."},
    subcommands = {OodCommand.Calibrate.class, OodCommand.Score.class, OodCommand.Eval.class})
final class OodCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;

  @Override
  public Integer call() {
    spec.commandLine().usage(spec.commandLine().getErr());
    return ExitCodes.USAGE;
  }

  /** Whole numbers as such; below 0.001 in scientific notation (a refined score of 4e-6 is not 0.0000); else 4 decimals. */
  static String num(double v) {
    if (v == Math.rint(v) && Math.abs(v) < 1e15) return Long.toString((long) v);
    if (Math.abs(v) < 1e-3) return String.format(Locale.ROOT, "%.3e", v);
    return String.format(Locale.ROOT, "%.4f", v);
  }

  static String scoreLabel(OodCalibration.Scoring s) {
    return s.kind() == OodScorer.Kind.CODE ? "code score" : s.kind().label() + " score (" + s.candidates() + " Hamming candidates, exact within them)";
  }

  static String layers(List<String> layers) {
    return layers.isEmpty() ? "all" : String.join(",", layers);
  }

  /** The layers as a CSV cell: {@code all}, or the names as a {@link CsvWriter#list}. */
  static String csvLayers(List<String> layers) {
    return layers.isEmpty() ? "all" : CsvWriter.list(layers);
  }

  static void calibration(JsonWriter j, Calibration c) {
    j.member("k", c.k()).member("statistic", c.statistic().label).name("layers").beginArray();
    for (String l : c.layers()) j.value(l);
    j.endArray().member("tpr", c.tpr()).member("threshold", c.threshold()).member("calibration_inputs", c.scores().length);
  }

  /**
   * Whether the index's live examples changed since the stored calibration: a warning (changed) or a
   * note (the calibration does not record them) on stderr, nothing when unchanged. Never refuses.
   */
  static void liveNote(PrintWriter err, OodCalibration.LiveCheck live) {
    if (live.message() == null) return;
    err.println((live.standing() == OodCalibration.Standing.CHANGED ? "warning: " : "note: ") + ApiNames.options(live.message()));
    err.flush();
  }

  /** The last member of a JSON document with calibration numbers: {@code index_changed} true, false, or null (cannot tell). */
  static JsonWriter liveMember(JsonWriter j, OodCalibration.LiveCheck live) {
    j.name("index_changed");
    return live.standing() == OodCalibration.Standing.UNRECORDED ? j.nullValue() : j.value(live.standing() == OodCalibration.Standing.CHANGED);
  }

  /** The caution: a member of JSON documents, the last lines of tables, one line on stderr beside CSV. */
  static void caution(PrintWriter out, PrintWriter err, Format f) {
    if (f == Format.csv) err.println("caution: " + OodCalibration.CAUTION);
    else if (f == Format.table) out.println("caution: " + OodCalibration.CAUTION);
  }

  @Command(name = "calibrate", mixinStandardHelpOptions = true,
      description = {"Scores held-out in-distribution inputs (not in the index) and stores the sorted scores, k, statistic, layers and the "
          + "threshold that accepts the target share of in-distribution inputs in the index (one atomic commit)."})
  static final class Calibrate implements Callable<Integer> {
    @Spec CommandSpec spec;
    @Mixin Verbose verbose;
    @Mixin IndexOption index;
    @Mixin QuerySourceOptions query;

    @Option(names = "-k", paramLabel = "K", defaultValue = "1",
        description = "Score = distance to the K-th nearest training example (k = 1 measured best on the digits set, see docs). Default: ${DEFAULT-VALUE}.")
    int k;

    @Option(names = "--statistic", paramLabel = "S", defaultValue = "kth",
        description = "kth (distance to the k-th nearest) or mean (mean of the k nearest distances). Default: ${DEFAULT-VALUE}.")
    String statistic;

    @Option(names = "--tpr", paramLabel = "RATE", defaultValue = "0.95",
        description = "Share of in-distribution inputs to accept (the threshold's target true-positive rate). Default: ${DEFAULT-VALUE}.")
    double tpr;

    @Option(names = "--check-overlap", description = "Refuse calibration rows that look like the index's own training rows (at least half of the rows have the code of the index example with the same id or, with activations and kept magnitudes, are copies of indexed examples in any order; without activations to compare, at least 99%% of them land on an indexed code, far more often than rows the index does not hold would). Without it, such rows get a warning.")
    boolean checkOverlap;

    @Option(names = "--score", paramLabel = "S",
        description = "euclidean (Euclidean distance of the activations to kept magnitudes among the Hamming candidates; sees their size: inputs scaled far outside the training range scored AUROC 1.000, the cosine 0.65-0.76), "
            + "refined (cosine distance to the same; ignores the activations' overall size, so blind to such inputs) or code (Hamming distances on codes; blind too). Default: euclidean when the index keeps magnitudes, else code.")
    String score;

    @Option(names = "--candidates", paramLabel = "N", defaultValue = "100",
        description = "Hamming candidates the refined or euclidean score re-ranks (raised to k when smaller; ties at the last distance included); refused with the code score. Default: ${DEFAULT-VALUE}.")
    int candidates;

    @Mixin LayersOption layers;
    @Mixin ThreadsOption threads;
    @Mixin FormatOption format;

    @Override
    public Integer call() {
      query.check();
      Statistic st;
      try {
        st = Statistic.ofLabel(statistic.toLowerCase(java.util.Locale.ROOT)); // as case-blind as every other choice
      } catch (IllegalArgumentException e) {
        throw new ParameterException(spec.commandLine(), "--statistic: " + e.getMessage());
      }
      if (candidates < 1) throw new ParameterException(spec.commandLine(), "--candidates must be at least 1, got " + candidates);
      OodCalibrate.Result r;
      try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "calibrating")) {
        r = OodCalibrate.run(index.dir, query.toSource(), query.range(), new OodCalibrate.Params(k, st, tpr, layers.layers, checkOverlap,
            score == null ? null : OodScorer.Kind.parse(score), GivenOptions.given(spec, "--candidates") ? candidates : 0,
            threads.resolved()), bar);
      }
      Summaries.notes(spec.commandLine().getErr(), r.notes());
      PrintWriter out = spec.commandLine().getOut();
      Calibration c = r.calibration();
      switch (format.format) {
        case json -> {
          JsonWriter j = new JsonWriter(out).beginObject().member("index", index.dir.toString()).member("score", r.scoring().kind().label())
              .member("candidates", r.scoring().candidates());
          calibration(j, c);
          j.name("scores").beginObject().member("min", r.min()).member("p50", r.p50()).member("p90", r.p90()).member("p95", r.p95())
              .member("p99", r.p99()).member("max", r.max()).member("mean", r.mean()).endObject()
              .member("caution", OodCalibration.CAUTION).name("warnings").beginArray();
          for (String w : r.warnings()) j.value(ApiNames.options(w));
          j.endArray().endObject();
          out.println();
        }
        case csv -> {
          CsvWriter w = new CsvWriter(out, List.of("inputs", "k", "statistic", "layers", "tpr", "threshold", "min", "p50", "p90", "p95", "p99", "max", "mean"));
          w.row(List.of(Integer.toString(r.inputs()), Integer.toString(c.k()), c.statistic().label, csvLayers(c.layers()), CsvWriter.number(c.tpr()),
              CsvWriter.number(c.threshold()), CsvWriter.number(r.min()), CsvWriter.number(r.p50()), CsvWriter.number(r.p90()),
              CsvWriter.number(r.p95()), CsvWriter.number(r.p99()), CsvWriter.number(r.max()), CsvWriter.number(r.mean())));
        }
        case table -> {
          out.println("calibrated " + index.dir + " on " + r.inputs() + " inputs: " + scoreLabel(r.scoring()) + ", k=" + c.k() + ", statistic " + c.statistic().label + ", layers "
              + layers(c.layers()) + ", target TPR " + c.tpr());
          out.println("threshold: " + num(c.threshold()) + " (an input is out when its score is above it)");
          TextTable t = new TextTable(List.of("min", "p50", "p90", "p95", "p99", "max", "mean"));
          t.row(List.of(num(r.min()), num(r.p50()), num(r.p90()), num(r.p95()), num(r.p99()), num(r.max()), num(r.mean())));
          out.println("calibration scores:");
          t.print(out, "  ");
        }
      }
      caution(out, spec.commandLine().getErr(), format.format);
      out.flush();
      Summaries.warnings(spec.commandLine().getErr(), r.warnings());
      return ExitCodes.OK;
    }
  }

  @Command(name = "score", mixinStandardHelpOptions = true,
      description = {"Per input: score, threshold, decision (in/out), conformal p-value, own region populated, nearest training examples as "
          + "evidence, and the model's maximum softmax probability beside it when the inputs are raw inputs and the index holds the model."})
  static final class Score implements Callable<Integer> {
    @Spec CommandSpec spec;
    @Mixin Verbose verbose;
    @Mixin IndexOption index;
    @Mixin QuerySourceOptions query;

    @Option(names = "--evidence", paramLabel = "N", defaultValue = "3", description = "Nearest training examples to name per input (at most the calibration's k: the default is cut to k, a larger N typed is refused; not with --decision-only). Default: ${DEFAULT-VALUE}.")
    int evidence;

    @Option(names = "--decision-only", description = "Only the decision (code-score calibrations only): stops as soon as k training examples lie within the threshold.")
    boolean decisionOnly;

    @Option(names = "--score", paramLabel = "S",
        description = "code, refined or euclidean; must match the stored calibration (refused otherwise). Default: the calibration's.")
    String score;


    @Mixin ThreadsOption threads;
    @Mixin FormatOption format;

    private OodCalibration.LiveCheck live; // the stored calibration against the index now, set once the work is done

    @Override
    public Integer call() {
      query.check();
      PrintWriter out = spec.commandLine().getOut();
      try (IndexReader reader = IndexReader.open(index.dir)) {
        if (decisionOnly) {
          GivenOptions.refuse(spec, "names the nearest examples of the full score; --decision-only gives the decision alone", "--evidence");
          Calibration c = OodCalibration.load(reader);
          if (score != null) OodCalibration.scorer(reader, c, OodScorer.Kind.parse(score));
          QueryCodes q = query.load(reader);
          OodScore.Decisions d = OodScore.decide(reader, q, threads.resolved());
          live = d.liveCheck();
          decisions(out, c, q, d.out());
        } else {
          refuseEvidenceAboveK(OodCalibration.load(reader).k());
          OodScore.Output o;
          try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "scoring")) {
            o = OodScore.run(reader, query.toSource(), query.range(),
                new OodScore.Params(evidence, score == null ? null : OodScorer.Kind.parse(score), threads.resolved()), bar);
          }
          Summaries.notes(spec.commandLine().getErr(), o.notes());
          live = o.liveCheck();
          print(out, o);
          query.noteIfEmpty(o.results().size());
          String one = o.results().stream().anyMatch(r -> r.maxSoftmax() != null) ? SoftmaxBaseline.oneOutputNote(reader) : null;
          if (one != null) {
            spec.commandLine().getErr().println("note: max_softmax: " + one);
            spec.commandLine().getErr().flush();
          }
        }
      }
      caution(out, spec.commandLine().getErr(), format.format);
      out.flush();
      liveNote(spec.commandLine().getErr(), live);
      return ExitCodes.OK;
    }

    /** The score finds the k nearest examples only, so a typed {@code --evidence} above k is refused (the default is cut to k). */
    private void refuseEvidenceAboveK(int k) {
      if (GivenOptions.given(spec, "--evidence") && evidence > k)
        throw new ParameterException(spec.commandLine(), "--evidence " + evidence + " is more than the stored calibration's -k " + k
            + " (set by ood calibrate -k): the score finds the k nearest training examples only; give --evidence " + k
            + " or less, or calibrate again with a larger -k");
    }

    private void decisions(PrintWriter out, Calibration c, QueryCodes q, boolean[] isOut) {
      String name = OodCalibration.Scoring.CODE.name(c.statistic()); // decision-only runs on code calibrations only
      switch (format.format) {
        case json -> {
          JsonWriter j = new JsonWriter(out).beginObject();
          calibration(j, c);
          j.member("score_name", name).name("results").beginArray();
          for (int i = 0; i < isOut.length; i++) j.beginObject().member("query", q.row(i)).member("decision", isOut[i] ? "out" : "in").endObject();
          liveMember(j.endArray().member("caution", OodCalibration.CAUTION), live).endObject();
          out.println();
        }
        case csv -> {
          CsvWriter w = new CsvWriter(out, List.of("query", "decision", "score_name"));
          for (int i = 0; i < isOut.length; i++) w.row(List.of(Long.toString(q.row(i)), isOut[i] ? "out" : "in", name));
        }
        case table -> {
          out.println("threshold " + num(c.threshold()) + " on the " + name + " (k=" + c.k() + ", layers " + layers(c.layers()) + ")");
          TextTable t = new TextTable(List.of("query", "decision"));
          for (int i = 0; i < isOut.length; i++) t.row(List.of(Long.toString(q.row(i)), isOut[i] ? "out" : "in"));
          t.print(out, "");
        }
      }
    }

    private void print(PrintWriter out, OodScore.Output o) {
      Calibration c = o.calibration();
      switch (format.format) {
        case json -> {
          JsonWriter j = new JsonWriter(out).beginObject();
          calibration(j, c);
          j.member("score_name", o.scoreName()).name("results").beginArray();
          for (OodScore.Result r : o.results()) {
            j.beginObject().member("query", r.row()).member("score", r.score()).member("kth", r.kth()).member("mean", r.mean())
                .name("own_region").value(r.ownRegion()).member("decision", r.out() ? "out" : "in").member("p_value", r.pValue())
                .name("evidence").beginArray();
            for (OodScore.Evidence e : r.evidence()) j.beginObject().member("id", e.id()).member("key", e.key()).member("distance", e.distance()).endObject();
            j.endArray().name("max_softmax");
            if (r.maxSoftmax() == null) j.nullValue();
            else j.value(r.maxSoftmax().doubleValue());
            j.endObject();
          }
          liveMember(j.endArray().member("caution", OodCalibration.CAUTION), live).endObject();
          out.println();
        }
        case csv -> {
          CsvWriter w = new CsvWriter(out, List.of("query", "score", "kth", "mean", "own_region", "decision", "p_value", "max_softmax", "evidence",
              "score_name"));
          for (OodScore.Result r : o.results())
            w.row(List.of(Long.toString(r.row()), CsvWriter.number(r.score()), Integer.toString(r.kth()), CsvWriter.number(r.mean()),
                Boolean.toString(r.ownRegion()), r.out() ? "out" : "in", CsvWriter.number(r.pValue()),
                r.maxSoftmax() == null ? "" : CsvWriter.number(r.maxSoftmax()), CsvWriter.list(evidence(r, false)), o.scoreName()));
        }
        case table -> {
          String cands = o.scoring().kind().usesMagnitudes() ? ", among " + o.scoring().candidates() + " Hamming candidates" : "";
          out.println("score: " + o.scoreName() + " (k=" + c.k() + cands + ", layers " + layers(c.layers()) + ")");
          out.println("threshold " + num(c.threshold()) + " (target TPR " + c.tpr() + ", " + c.scores().length + " calibration inputs)");
          boolean msp = o.results().stream().anyMatch(r -> r.maxSoftmax() != null);
          List<String> header = new ArrayList<>(List.of("query", "score", "decision", "p-value", "own region"));
          if (msp) header.add("max softmax");
          header.add("nearest (key:distance)");
          TextTable t = new TextTable(header);
          for (OodScore.Result r : o.results()) {
            List<String> row = new ArrayList<>(List.of(Long.toString(r.row()), num(r.score()), r.out() ? "out" : "in",
                String.format(Locale.ROOT, "%.4f", r.pValue()), r.ownRegion() ? "populated" : "empty"));
            if (msp) row.add(r.maxSoftmax() == null ? "" : String.format(Locale.ROOT, "%.4f", r.maxSoftmax()));
            row.add(String.join(" ", evidence(r, true)));
            t.row(row);
          }
          t.print(out, "");
        }
      }
    }

    /** The nearest examples as {@code key:distance} items; for a table, keys quoted as {@link TextTable#item} says. */
    private static List<String> evidence(OodScore.Result r, boolean table) {
      List<String> items = new ArrayList<>();
      for (OodScore.Evidence e : r.evidence()) items.add((table ? TextTable.item(e.key()) : e.key()) + ":" + e.distance());
      return items;
    }
  }

  @Command(name = "eval", mixinStandardHelpOptions = true,
      description = {"AUROC, FPR at 95%% TPR and AUPR of the calibrated score (code, refined or euclidean) on in- and out-of-distribution inputs, "
          + "a breakdown of the code score over k, statistic and layers, and beside it the k-NN score on float activations and the softmax baseline when they apply; "
          + "with a refined or euclidean calibration, both of these scores.",
          "Optionally the ROC curves as CSV and a self-contained HTML page."})
  static final class Eval implements Callable<Integer> {
    enum Kind { inputs, activations, codes }

    @Spec CommandSpec spec;
    @Mixin Verbose verbose;
    @Mixin IndexOption index;

    @Option(names = "--in", required = true, paramLabel = "FILE", description = "In-distribution rows, a file of --kind (held out from the index and the calibration).")
    Path in;

    @Option(names = "--out", required = true, paramLabel = "FILE", description = "Out-of-distribution rows, a file of --kind (an input file, not an output).")
    Path outFile;

    @Option(names = "--kind", paramLabel = "KIND",
        description = "What --in and --out hold: inputs (run through the index's model), activations or codes. Default: activations, or for an index built from a model inputs or its hidden activations by each file's width.")
    Kind kind;

    @Option(names = "--in-floats", paramLabel = "FILE", description = "Float activations of the --in rows (.npy or .csv), for the float k-NN score.")
    Path inFloats;

    @Option(names = "--out-floats", paramLabel = "FILE", description = "Float activations of the --out rows.")
    Path outFloats;

    @Option(names = "--train-floats", paramLabel = "FILE",
        description = "Float activations of the training examples (the float score's reference set; one row per index id, in build order, for the refined score).")
    Path trainFloats;

    @Option(names = "--candidates", paramLabel = "N", defaultValue = "100",
        description = "Hamming candidates the refined score re-ranks by float distance (with --train-floats whose rows are the index ids and a code calibration). Default: ${DEFAULT-VALUE}.")
    int candidates;

    @Option(names = "--score", paramLabel = "S",
        description = "code, refined or euclidean; must match the stored calibration (refused otherwise). Default: the calibration's.")
    String score;

    @Option(names = "--roc", paramLabel = "FILE", description = "Write the ROC curves as CSV (score,threshold,false_alarm_rate,detection_rate).")
    Path roc;

    @Option(names = "--html", paramLabel = "FILE", description = "Write a self-contained HTML page (inline SVG: ROC curves, score histograms).")
    Path html;

    @Mixin HeaderOption header;
    @Mixin ThreadsOption threads;
    @Mixin FormatOption format;

    private OodCalibration.LiveCheck live; // the stored calibration against the index now, set once the work is done

    @Override
    public Integer call() {
      CsvMatrixReader.Header h = header.of(in, outFile, inFloats, outFloats, trainFloats);
      OutputFiles.Input[] inputs = {new OutputFiles.Input("--in", in), new OutputFiles.Input("--out", outFile),
          new OutputFiles.Input("--in-floats", inFloats), new OutputFiles.Input("--out-floats", outFloats),
          new OutputFiles.Input("--train-floats", trainFloats)};
      if (roc != null) OutputFiles.checkTarget(roc, "--roc", inputs);
      if (html != null) OutputFiles.checkTarget(html, "--html", inputs);
      OutputFiles.checkDistinct(html, "--html", roc, "--roc");
      OodEval.Result r;
      try (IndexReader reader = IndexReader.open(index.dir)) {
        boolean hasModel = BuildInfo.fromProperties(reader.properties(), index.dir.toString()).hasModel();
        if (kind == Kind.inputs && !hasModel)
          throw new BadInputException(index.dir + ": --kind inputs needs an index built from a model (build --model), and this one holds"
              + " none; give --kind activations or --kind codes");
        Kind kIn = kind != null ? kind : hasModel ? kindOf(reader, in, h) : Kind.activations;
        Kind kOut = kind != null ? kind : hasModel ? kindOf(reader, outFile, h) : Kind.activations;
        try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "evaluating")) {
          if (candidates < 1) throw new ParameterException(spec.commandLine(), "--candidates must be at least 1, got " + candidates);
          r = OodEval.run(reader, new OodEval.Params(source(kIn, in), source(kOut, outFile), inFloats, outFloats, trainFloats,
              GivenOptions.given(spec, "--candidates") ? candidates : 0,
              score == null ? null : OodScorer.Kind.parse(score), threads.resolved(), h), bar);
        }
        live = r.liveCheck();
      }
      Summaries.notes(spec.commandLine().getErr(), r.notes());
      List<OodEval.Scored> scores = r.scores();
      if (roc != null) write(roc, rocCsv(scores), "--roc");
      if (html != null) write(html, EvalPage.render("Out-of-distribution evaluation: " + index.dir.getFileName(), r), "--html");
      PrintWriter out = spec.commandLine().getOut();
      switch (format.format) {
        case json -> {
          JsonWriter j = new JsonWriter(out).beginObject();
          calibration(j, r.calibration());
          j.member("in", r.code().metrics().nIn()).member("out", r.code().metrics().nOut()).name("scores").beginArray();
          for (OodEval.Scored s : scores) {
            RocMetrics m = s.metrics();
            j.beginObject().member("name", s.name()).member("description", s.description()).member("auroc", m.auroc())
                .member("fpr_at_95_tpr", m.fprAt95Tpr()).member("aupr_in", m.auprIn()).member("aupr_out", m.auprOut()).endObject();
          }
          j.endArray().name("variants").beginArray();
          for (OodEval.Variant v : r.variants()) {
            j.beginObject().member("k", v.k()).member("statistic", v.statistic().label).name("layers").beginArray();
            for (String l : v.layers()) j.value(l);
            j.endArray().member("auroc", v.auroc()).member("fpr_at_95_tpr", v.fprAt95Tpr()).endObject();
          }
          j.endArray().name("warnings").beginArray();
          for (String w : r.warnings()) j.value(ApiNames.options(w));
          liveMember(j.endArray().member("caution", OodCalibration.CAUTION), live).endObject();
          out.println();
        }
        case csv -> {
          CsvWriter w = new CsvWriter(out, List.of("score", "k", "statistic", "layers", "auroc", "fpr_at_95_tpr", "aupr_in", "aupr_out"));
          for (OodEval.Scored s : scores)
            w.row(List.of(s.name(), "", "", "", CsvWriter.number(s.metrics().auroc()), CsvWriter.number(s.metrics().fprAt95Tpr()),
                CsvWriter.number(s.metrics().auprIn()), CsvWriter.number(s.metrics().auprOut())));
          for (OodEval.Variant v : r.variants())
            w.row(List.of("code", Integer.toString(v.k()), v.statistic().label, csvLayers(v.layers()), CsvWriter.number(v.auroc()),
                CsvWriter.number(v.fprAt95Tpr()), "", ""));
        }
        case table -> {
          out.println(r.code().metrics().nIn() + " in-distribution and " + r.code().metrics().nOut() + " out-of-distribution inputs");
          TextTable t = new TextTable(List.of("score", "AUROC", "FPR@95%TPR", "AUPR in", "AUPR out", "what it is"));
          for (OodEval.Scored s : scores) {
            RocMetrics m = s.metrics();
            t.row(List.of(s.name(), f(m.auroc()), f(m.fprAt95Tpr()), f(m.auprIn()), f(m.auprOut()), s.description()));
          }
          t.print(out, "");
          out.println();
          out.println("code-score variants:");
          TextTable v = new TextTable(List.of("k", "statistic", "layers", "AUROC", "FPR@95%TPR"));
          for (OodEval.Variant x : r.variants())
            v.row(List.of(Integer.toString(x.k()), x.statistic().label, layers(x.layers()), f(x.auroc()), f(x.fprAt95Tpr())));
          v.print(out, "  ");
        }
      }
      Summaries.warnings(spec.commandLine().getErr(), r.warnings());
      caution(out, spec.commandLine().getErr(), format.format);
      out.flush();
      liveNote(spec.commandLine().getErr(), live);
      return ExitCodes.OK;
    }

    /** For a model's index: inputs, or hidden activations when the file's width fits those and not the inputs (as compare). */
    private static Kind kindOf(IndexReader reader, Path file, CsvMatrixReader.Header h) {
      return QuerySource.kindOf(reader, file, h, "--kind") == Source.Kind.ACTIVATIONS ? Kind.activations : Kind.inputs;
    }

    private static Source source(Kind k, Path file) {
      return switch (k) {
        case inputs -> Source.inputs(file, null);
        case activations -> Source.activations(file);
        case codes -> Source.codes(file);
      };
    }

    private static String f(double v) {
      return String.format(Locale.ROOT, "%.4f", v);
    }

    static String rocCsv(List<OodEval.Scored> scores) {
      StringWriter s = new StringWriter();
      PrintWriter p = new PrintWriter(s);
      CsvWriter w = new CsvWriter(p, List.of("score", "threshold", "false_alarm_rate", "detection_rate"));
      for (OodEval.Scored sc : scores)
        for (RocMetrics.Point pt : sc.metrics().roc())
          w.row(List.of(sc.name(), Double.isInfinite(pt.threshold()) ? "inf" : CsvWriter.number(pt.threshold()), CsvWriter.number(pt.falseAlarmRate()),
              CsvWriter.number(pt.detectionRate())));
      p.flush();
      return s.toString();
    }

    private static void write(Path file, String text, String option) {
      try {
        OutputFiles.write(file, text.getBytes(StandardCharsets.UTF_8), option);
      } catch (IOException e) {
        throw new UncheckedIOException("cannot write " + file + ": " + e.getMessage(), e);
      }
    }
  }
}
