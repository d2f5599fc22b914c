package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import io.actindex.edge.EdgeBundle.Calibration;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.index.store.IndexReader;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Set;
import java.util.TreeSet;

/**
 * {@code ood eval}: how well scores separate in-distribution inputs ({@code in}) from
 * out-of-distribution ones ({@code out}), as {@link RocMetrics}: the calibrated code score; a
 * breakdown over k (1, 5, 10 and the calibrated k), statistic and layers (all, and each layer
 * alone) so users can choose; with float activations of the same inputs and of the training
 * examples, the k-NN score on floats ({@link FloatKnnScore}); with raw inputs and a model in the
 * index, the softmax baseline ({@link SoftmaxBaseline}); with a refined or euclidean calibration,
 * both of these scores on the kept magnitudes (the calibration's k, statistic, layers and
 * candidates). Side by side, never mixed.
 *
 * <pre>{@code
 * try (IndexReader r = IndexReader.open(dir)) {
 *   OodEval.Result e = OodEval.run(r, new OodEval.Params(Source.inputs(in, null), Source.inputs(out, null), null, null, null), Progress.NONE);
 *   double auroc = e.code().metrics().auroc();
 * }
 * }</pre>
 */
public final class OodEval {
  private OodEval() {}

  /**
   * The in and out inputs; float activations of in, out and the training rows (all three or none);
   * {@code candidates}: Hamming candidates the training-floats refined score re-ranks (0 = {@link
   * #REFINE_CANDIDATES}; another count without the training floats or with a refined calibration is
   * refused); {@code score}: the score asked for (null = the calibration's; a different one is
   * refused). With a refined or euclidean calibration, {@code refined} and {@code euclidean} are the
   * scores from the index's kept magnitudes (the calibration's candidates), and the training floats
   * feed only the float score.
   * {@code threads >= 1}: inputs searched and scored in parallel (the same result for any count).
   * {@code header}: whether the first line of every CSV file read (in and out, replacing their
   * sources' own rule, and the float files) is a header (null = detect).
   */
  public record Params(Source in, Source out, Path inFloats, Path outFloats, Path trainFloats, int candidates, OodScorer.Kind score,
      int threads, CsvMatrixReader.Header header) {
    public Params(Source in, Source out, Path inFloats, Path outFloats, Path trainFloats) {
      this(in, out, inFloats, outFloats, trainFloats, 0, null, 1, null);
    }

    public Params(Source in, Source out, Path inFloats, Path outFloats, Path trainFloats, int candidates, OodScorer.Kind score) {
      this(in, out, inFloats, outFloats, trainFloats, candidates, score, 1, null);
    }

    public Params {
      if (header == null) header = CsvMatrixReader.Header.AUTO;
      in = in.withHeader(header);
      out = out.withHeader(header);
      Parallel.checkThreads(threads);
      if (candidates < 0) throw new BadParameterException("candidates", " must be at least 1 (or 0 for the default, " + Refine.DEFAULT_CANDIDATES + "), got " + candidates);
      int floats = (inFloats != null ? 1 : 0) + (outFloats != null ? 1 : 0) + (trainFloats != null ? 1 : 0);
      if (floats != 0 && floats != 3)
        throw new BadInputException("the float score needs `inFloats`, `outFloats` and `trainFloats` together");
      if (candidates != 0 && trainFloats == null)
        throw new BadInputException("`candidates` is for the refined score from `trainFloats`; without the float files there is none");
    }
  }

  /** One score's name, what it is, its in and out values and its metrics. */
  public record Scored(String name, String description, double[] in, double[] out, RocMetrics metrics) {
    static Scored of(String name, String description, double[] in, double[] out) {
      return new Scored(name, description, in, out, RocMetrics.of(in, out));
    }
  }

  /** AUROC and FPR at 95% TPR of one code-score variant. */
  public record Variant(int k, Statistic statistic, List<String> layers, double auroc, double fprAt95Tpr) {}

  /**
   * {@code floats}, {@code refined}, {@code softmax} and {@code euclidean} are null when they do not
   * apply. With a code calibration, {@code refined} needs training floats whose rows are the index's
   * ids (one row per id, in build order) and {@code euclidean} is null; with a refined or euclidean
   * calibration both are the scores on the index's kept magnitudes.
   * {@code notes}: how the in and out files were read ({@link QueryCodes#notes()}, e.g. their CSV header), then
   * the float files ({@link FloatKnnScore.Queries#notes()}, {@link FloatKnnScore#notes()}). {@code
   * liveCheck}: whether the index's live examples changed since the calibration ({@link
   * OodCalibration#liveCheck}).
   */
  public record Result(Calibration calibration, Scored code, List<Variant> variants, Scored floats, Scored refined, Scored softmax,
      Scored euclidean, List<String> warnings, List<String> notes, OodCalibration.LiveCheck liveCheck) {
    /** The scores that apply, code score first, euclidean (added later) last. */
    public List<Scored> scores() {
      List<Scored> s = new ArrayList<>(List.of(code));
      if (floats != null) s.add(floats);
      if (refined != null) s.add(refined);
      if (softmax != null) s.add(softmax);
      if (euclidean != null) s.add(euclidean);
      return List.copyOf(s);
    }
  }

  public static Result run(IndexReader reader, Params p, Progress progress) {
    Calibration cal = OodCalibration.load(reader);
    OodScorer scorer = OodCalibration.scorer(reader, cal, p.score());
    if (p.candidates() != 0 && scorer.kind().usesMagnitudes())
      throw new BadInputException("`candidates` is for the refined score from `trainFloats` with a code calibration; this " + scorer.kind().label()
          + " calibration re-ranks its own " + OodCalibration.scoring(reader).candidates() + " candidates (set at ood calibrate)");
    QuerySource.Queries inQ = scorer.load(p.in(), RowRange.ALL), outQ = scorer.load(p.out(), RowRange.ALL);
    QueryCodes in = inQ.codes(), out = outQ.codes();
    // each was checked against the build's header; against each other too (an index built from .npy records none)
    SourceColumns.check(in.columns(), "`in` (" + p.in().file() + ")", out.columns(), p.out().file().toString());
    if (in.size() == 0) throw new BadInputException(p.in().file() + ": no rows; ood eval needs rows in both `in` and `out`");
    if (out.size() == 0) throw new BadInputException(p.out().file() + ": no rows; ood eval needs rows in both `in` and `out`");
    // k values and layer sets of the breakdown; one k-NN search per input and layer set
    TreeSet<Integer> ks = new TreeSet<>(List.of(1, 5, 10, cal.k()));
    ks.removeIf(k -> k > reader.liveCount());
    int kMax = ks.last();
    List<List<String>> layerSets = new ArrayList<>();
    layerSets.add(List.of());
    if (reader.layout().segments().size() > 1) for (var s : reader.layout().segments()) layerSets.add(List.of(s.name()));
    if (!layerSets.contains(cal.layers())) layerSets.add(cal.layers());
    int threads = p.threads();
    Progress prog = progress == null ? Progress.NONE : progress;
    Hits[][] inHits = hits(reader, in.codes(), layerSets, kMax, prog, 0, in.size() + out.size(), threads);
    Hits[][] outHits = hits(reader, out.codes(), layerSets, kMax, prog, in.size(), in.size() + out.size(), threads);
    List<Variant> variants = new ArrayList<>();
    Scored code = null;
    for (int ls = 0; ls < layerSets.size(); ls++)
      for (int k : ks)
        for (Statistic st : Statistic.values()) {
          double[] a = values(inHits[ls], k, st), b = values(outHits[ls], k, st);
          RocMetrics m = RocMetrics.of(a, b);
          variants.add(new Variant(k, st, layerSets.get(ls), m.auroc(), m.fprAt95Tpr()));
          if (k == cal.k() && st == cal.statistic() && layerSets.get(ls).equals(cal.layers()))
            code = new Scored("code", "Hamming k-NN score on codes (k=" + k + ", " + st.label + ", layers " + layerLabel(cal.layers()) + ")", a, b, m);
        }
    Scored floats = null, refined = null;
    List<String> warnings = new ArrayList<>();
    String training = OodCalibrate.trainingRows(reader, inQ);
    if (training != null)
      warnings.add(p.in().file() + ": " + training + ", as rows of the training file would; their scores are optimistically low, so every"
          + " AUROC and FPR here is better than new in-distribution inputs would give (evaluate with held-out inputs the index does not hold)");
    Set<String> notes = new LinkedHashSet<>(in.notes()); // each once: a float file may be --in or --out itself
    notes.addAll(out.notes());
    if (p.trainFloats() != null) {
      FloatKnnScore f = new FloatKnnScore(p.trainFloats(), p.header());
      FloatKnnScore.Queries fa = f.queries(p.inFloats()), fb = f.queries(p.outFloats());
      notes.addAll(fa.notes());
      notes.addAll(fb.notes());
      notes.addAll(f.notes());
      // each was checked against the training floats' header; against each other too (the training floats may have none)
      SourceColumns.check(fa.columns(), "`inFloats` (" + p.inFloats() + ")", fb.columns(), p.outFloats().toString());
      double[][] qa = fa.rows(), qb = fb.rows();
      if (qa.length != in.size())
        throw new BadInputException(p.inFloats() + ": " + qa.length + " rows of floats, but `in` " + p.in().file() + " has " + in.size()
            + "; `inFloats` must hold the same inputs in the same order");
      if (qb.length != out.size())
        throw new BadInputException(p.outFloats() + ": " + qb.length + " rows of floats, but `out` " + p.out().file() + " has " + out.size()
            + "; `outFloats` must hold the same inputs in the same order");
      floats = Scored.of("float", "k-NN score on unit-length float activations (k=" + cal.k() + ")", f.scores(qa, cal.k(), threads),
          f.scores(qb, cal.k(), threads));
      if (scorer.kind() == OodScorer.Kind.CODE && f.rows() == reader.maxId()) { // training rows are the index's ids
        int c = Math.min(Math.max(p.candidates() == 0 ? REFINE_CANDIDATES : p.candidates(), cal.k()), reader.liveCount());
        long[] mask = Layers.maskOrNull(reader.layout(), cal.layers());
        refined = Scored.of("refined", "float k-NN distance among the " + c + " nearest codes (k=" + cal.k() + ", exact within the candidates)",
            f.refined(qa, candidates(reader, in.codes(), c, mask, threads), cal.k()),
            f.refined(qb, candidates(reader, out.codes(), c, mask, threads), cal.k()));
      } else if (scorer.kind() == OodScorer.Kind.CODE) {
        warnings.add("no refined score: " + p.trainFloats() + " has " + f.rows() + " rows but the index has " + reader.maxId()
            + " ids (the refined score needs one row per index id, in build order); the float score uses all its rows");
      }
    }
    Scored euclidean = null;
    if (scorer.kind().usesMagnitudes()) { // both distances on the kept magnitudes, whichever was calibrated
      refined = kept(reader, cal, OodScorer.Kind.REFINED, inQ, outQ, threads);
      euclidean = kept(reader, cal, OodScorer.Kind.EUCLIDEAN, inQ, outQ, threads);
    }
    Scored softmax = null;
    double[] sa = SoftmaxBaseline.scores(reader, p.in(), RowRange.ALL), sb = SoftmaxBaseline.scores(reader, p.out(), RowRange.ALL);
    if (sa != null && sb != null) {
      String one = SoftmaxBaseline.oneOutputNote(reader);
      softmax = Scored.of("softmax", "1 - maximum softmax probability of the model (baseline)" + (one == null ? "" : "; " + one), sa, sb);
    }
    return new Result(cal, code, List.copyOf(variants), floats, refined, softmax, euclidean, List.copyOf(warnings), List.copyOf(notes),
        OodCalibration.liveCheck(reader));
  }

  /** The {@code kind} score (refined or euclidean) of in and out with the stored calibration's k, statistic, layers and candidates. */
  private static Scored kept(IndexReader reader, Calibration cal, OodScorer.Kind kind, QuerySource.Queries in, QuerySource.Queries out, int threads) {
    int c = OodCalibration.scoring(reader).candidates();
    OodScorer s = new OodScorer(reader, cal.k(), cal.statistic(), cal.layers(), kind, c);
    String what = kind == OodScorer.Kind.REFINED ? "cosine" : "Euclidean";
    return Scored.of(kind.label(), what + " distance of activations to kept magnitudes among the " + c + " nearest codes (k=" + cal.k() + ", "
        + cal.statistic().label + ", exact within the candidates)", s.values(in, Progress.NONE, threads), s.values(out, Progress.NONE, threads));
  }

  /** Hamming candidates the refined score re-ranks. */
  public static final int REFINE_CANDIDATES = 100;

  private static Hits[] candidates(IndexReader reader, CodeBlock codes, int c, long[] mask, int threads) {
    Hits[] h = new Hits[codes.size()];
    Parallel.forEach(h.length, threads, Progress.NONE, i -> h[i] = reader.search(codes.code(i), c, null, mask));
    return h;
  }

  static String layerLabel(List<String> layers) {
    return layers.isEmpty() ? "all" : String.join(",", layers);
  }

  /** The k nearest of every code on every layer set; one task per code, so any thread count gives the same hits. */
  private static Hits[][] hits(IndexReader reader, CodeBlock codes, List<List<String>> layerSets, int k, Progress progress, int done, int total,
      int threads) {
    Hits[][] h = new Hits[layerSets.size()][codes.size()];
    long[][] masks = new long[layerSets.size()][];
    for (int ls = 0; ls < masks.length; ls++) masks[ls] = Layers.maskOrNull(reader.layout(), layerSets.get(ls));
    Parallel.forEach(codes.size(), threads, (d, n) -> progress.update(done + d, total), i -> {
      for (int ls = 0; ls < masks.length; ls++) h[ls][i] = reader.search(codes.code(i), k, null, masks[ls]);
    });
    return h;
  }

  private static double[] values(Hits[] hits, int k, Statistic st) {
    double[] v = new double[hits.length];
    for (int i = 0; i < v.length; i++) v[i] = OodScorer.of(hits[i], k, st).value();
    return v;
  }
}
