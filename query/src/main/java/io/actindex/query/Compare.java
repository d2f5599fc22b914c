package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.IdSet;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.encode.io.MatrixReader;
import io.actindex.encode.io.NpzReader;
import io.actindex.index.meta.Where;
import io.actindex.index.store.IndexReader;
import io.actindex.query.stats.AgreementMmd;
import io.actindex.query.stats.FiringRates;
import io.actindex.query.stats.FloatSample;
import io.actindex.query.stats.Frechet;
import io.actindex.query.stats.GaussianMmd;
import io.actindex.query.stats.KernelMatrix;
import io.actindex.query.stats.LinearMmd;
import io.actindex.query.stats.PairDistances;
import io.actindex.query.stats.PermutationTest;
import io.actindex.query.stats.Permutations;
import io.actindex.query.stats.Wasserstein;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Comparator;
import java.util.List;
import java.util.Locale;
import java.util.function.DoubleUnaryOperator;

/**
 * Two samples of inputs compared where the model looks: in code space (kernel MMD^2 with
 * permutation tests, Wasserstein-2 with Hamming ground cost), per layer, per neuron (firing-rate
 * z tests, Benjamini-Hochberg), and, when float activations are at hand, in full precision
 * (Frechet distance between Gaussian fits, Gaussian-kernel MMD^2) beside it.
 *
 * <pre>{@code
 * Compare.Result r = Compare.run(new Compare.Params(null,
 *     Compare.Sample.file(Source.activations(Path.of("train.npy"))),
 *     Compare.Sample.file(Source.activations(Path.of("week.npy"))),
 *     null, null, null, null, null, null, Compare.Options.defaults()), Progress.NONE);
 * }</pre>
 */
public final class Compare {
  private Compare() {}

  /**
   * One sample: a file (encoded with the index's rule when there is an index) or a filtered part of
   * the index. {@code kindFromIndex}: the file's kind was not given; with an index it is {@link
   * QuerySource#kindOf}, without one the source's own (activations).
   */
  public record Sample(Source source, String where, boolean kindFromIndex) {
    public Sample {
      if ((source == null) == (where == null))
        throw new BadInputException("a sample is either a file or a where-expression over the index");
      if (kindFromIndex && source == null) throw new BadParameterException("kindFromIndex", " needs a file: only a file's kind can come from the index");
    }

    public Sample(Source source, String where) {
      this(source, where, false);
    }

    public static Sample file(Source s) {
      return new Sample(s, null);
    }

    /** A file of the kind the index was built from, told apart by its width for a model's index ({@link QuerySource#kindOf}). */
    public static Sample fileOfIndexKind(Path file) {
      return new Sample(Source.activations(file), null, true);
    }

    public static Sample where(String expr) {
      return new Sample(null, expr);
    }

    /** This sample with its file read under the CSV header rule {@code h}. */
    Sample withHeader(CsvMatrixReader.Header h) {
      return source == null ? this : new Sample(source.withHeader(h), where, kindFromIndex);
    }

    String describe() {
      return source != null ? source.file().toString() : "where " + where;
    }

    /** For error messages: a short prefix of a long filter. */
    String brief() {
      return Snippet.of(describe());
    }
  }

  /** The most rows per sample in the pooled pairwise matrices: {@code (2 x rows)^2} entries fit one Java array. */
  public static final int MAX_MATRIX_ROWS = 23_170;

  /** The most rows per sample in an A x B distance matrix (exact W2, Sinkhorn): {@code rows^2} entries fit one Java array. */
  public static final int MAX_PAIR_ROWS = 46_340;

  /** The longest codes: pairwise distances are held in 16 bits. */
  public static final int MAX_BITS = Character.MAX_VALUE;

  /**
   * Statistics options. {@code sigma}: bandwidth of the exponential code kernel (null = median
   * heuristic); {@code matrixRows}: at most this many rows per sample go into the pairwise
   * matrices (exponential and Gaussian kernels), a seeded random subsample beyond; {@code
   * exactMax}: exact W2 for equal sizes up to this; {@code sinkhornRows}: rows per sample for
   * Sinkhorn (subsample beyond); {@code reg}: Sinkhorn regularisation relative to the mean squared
   * distance; {@code top}: neurons listed; {@code alpha}: level of the verdict and of the neuron
   * list.
   */
  public record Options(int permutations, long seed, Double sigma, double alpha, int top, int matrixRows, int exactMax,
      int sinkhornRows, double reg, int maxIter, double tol, int threads) {
    public Options {
      if (permutations < 1) throw new BadParameterException("permutations", " must be at least 1, got " + permutations);
      if (sigma != null && !(sigma > 0 && Double.isFinite(sigma))) throw new BadParameterException("sigma", " must be a positive number, got " + sigma);
      if (!(alpha > 0 && alpha < 1)) throw new BadParameterException("alpha", " must be between 0 and 1, got " + alpha);
      if (top < 0) throw new BadParameterException("top", " must be 0 or more, got " + top);
      if (matrixRows < 2 || matrixRows > MAX_MATRIX_ROWS)
        throw new BadParameterException("matrixRows", " must be from 2 to " + MAX_MATRIX_ROWS + " (both samples' rows share one pairwise matrix), got " + matrixRows);
      if (exactMax < 0 || exactMax > MAX_PAIR_ROWS)
        throw new BadParameterException("exactMax", " must be from 0 to " + MAX_PAIR_ROWS + " (an A x B distance matrix in one array), got " + exactMax);
      if (sinkhornRows < 2 || sinkhornRows > MAX_PAIR_ROWS)
        throw new BadParameterException("sinkhornRows", " must be from 2 to " + MAX_PAIR_ROWS + " (an A x B distance matrix in one array), got " + sinkhornRows);
      if (!(reg > 0 && Double.isFinite(reg))) throw new BadParameterException("reg", " must be a positive number, got " + reg);
      if (maxIter < 1) throw new BadParameterException("maxIter", " must be at least 1, got " + maxIter);
      if (!(tol > 0 && tol < 2)) // two marginals of mass 1 are never more than 2 apart in L1: a larger tol stops at once
        throw new BadParameterException("tol", " must be above 0 and below 2 (the L1 distance between the marginals is at most 2), got " + tol);
      Parallel.checkThreads(threads);
    }

    public static Options defaults() {
      return new Options(1000, 42, null, 0.05, 10, 2000, 3000, 4000, 0.05, 1000, 1e-5, 1);
    }
  }

  /**
   * {@code index}: encode files like it and allow {@code where} samples (null: files only, encoded
   * with {@code encode}, codes files read with {@code codesLayout}); {@code model}: for inputs
   * without an index; {@code aFloats}/{@code bFloats}: float activations for the full-precision
   * reference (null: the activations files themselves, if the samples are activations);
   * {@code layers}: compare only these layers (null = all); {@code header}: whether the first line of
   * every CSV file read (the samples' files, replacing their sources' own rule, and the float
   * files) is a header (null = detect).
   */
  public record Params(Path index, Sample a, Sample b, EncodeOptions encode, CodeLayout codesLayout, Path model,
      Path aFloats, Path bFloats, List<String> layers, Options options, CsvMatrixReader.Header header) {
    public Params {
      if (a == null || b == null) throw new BadInputException("two samples are needed");
      if (index == null && (a.where() != null || b.where() != null))
        throw new BadInputException("`a.where` and `b.where` need `index`");
      layers = layers == null ? List.of() : List.copyOf(layers);
      if (header == null) header = CsvMatrixReader.Header.AUTO;
      a = a.withHeader(header);
      b = b.withHeader(header);
    }

    /** CSV first lines detected ({@link CsvMatrixReader.Header#AUTO}). */
    public Params(Path index, Sample a, Sample b, EncodeOptions encode, CodeLayout codesLayout, Path model, Path aFloats, Path bFloats,
        List<String> layers, Options options) {
      this(index, a, b, encode, codesLayout, model, aFloats, bFloats, layers, options, CsvMatrixReader.Header.AUTO);
    }
  }

  /**
   * One kernel MMD^2 result. {@code kernel}: "agreement" ({@code 1 - d/L}), "exponential"
   * ({@code exp(-d/sigma)}) or "gaussian" (floats); {@code rowsA/rowsB}: rows it was computed on
   * ({@code subsampled} when fewer than the samples hold).
   */
  public record Mmd(String kernel, Double sigma, double mmd2, double pValue, int permutations, double nullMean, double nullSd,
      int rowsA, int rowsB, boolean subsampled) {}

  /** The full-precision reference: Frechet distance (squared) of Gaussian fits and Gaussian-kernel MMD^2. */
  public record Floats(int rowsA, int rowsB, int columns, double frechet, Mmd mmd) {}

  /** One layer: agreement-kernel MMD^2 on all rows with its p-value, exponential-kernel MMD^2 on the matrix rows. */
  public record Layer(String name, int bits, double agreementMmd2, double agreementP, double exponentialMmd2, double sigma,
      double meanAbsRateDiff, int neuronsMoved) {}

  /** A neuron ({@code layer:unit}) and its firing-rate test. */
  public record Neuron(String name, double rateA, double rateB, double z, double p, double q) {}

  public record Result(String describeA, String describeB, int rowsA, int rowsB, CodeLayout layout, List<Mmd> mmd,
      LinearMmd.Result linear, Wasserstein.Result w2, Floats floats, String floatsAbsent, List<Layer> layers,
      List<Neuron> neurons, int neuronsMoved, String correction, double alpha, String verdict, List<String> notes) {}

  public static Result run(Params p, Progress progress) {
    return run(p, progress, true);
  }

  /**
   * As {@link #run(Params, Progress)}; with {@code withFloats} false (the report, which shows no floats)
   * no float file is read and no floats are taken from a model or kept magnitudes.
   */
  static Result run(Params p, Progress progress, boolean withFloats) {
    Progress prog = progress == null ? Progress.NONE : progress;
    CodeBlock a, b;
    // floats compare takes itself for a sample without a floats file, in the layout of its codes: a model's hidden
    // activations on a file of inputs, or the kept magnitudes of the examples a filter selects; and where they come from
    float[] derivedA, derivedB;
    String[] floatsFrom;
    List<String> notes = new ArrayList<>();
    Sample sa = p.a(), sb = p.b();
    if (p.index() != null) {
      try (IndexReader reader = IndexReader.open(p.index())) {
        sa = ofIndexKind(reader, sa);
        sb = ofIndexKind(reader, sb);
        // the floats compare may take itself are kept in the same read when they are few enough (see keepFloats)
        int bits = reader.hasMagnitudes() ? reader.magnitudeBits() : 0;
        QuerySource.Encoded ea = load(reader, sa, "A", prog, notes, keep(withFloats, sa, p.aFloats(), bits)),
            eb = load(reader, sb, "B", prog, notes, keep(withFloats, sb, p.bFloats(), bits));
        // each file was checked against the build's header; B against A too (an index built from .npy records none)
        if (sb.source() != null)
          SourceColumns.check(ea.columns(), "sample A (" + sa.brief() + ")", eb.columns(), sb.source().file().toString());
        a = ea.codes();
        b = eb.codes();
        derivedA = withFloats && keepFloats(sa, p.aFloats(), ea.codes(), "A", notes, bits)
            ? ea.activations() : null; // kept by this read: its cap counts the same units as keepFloats
        derivedB = withFloats && keepFloats(sb, p.bFloats(), eb.codes(), "B", notes, bits)
            ? eb.activations() : null;
        floatsFrom = new String[] {floatsFrom(sa, bits), floatsFrom(sb, bits)};
      }
    } else {
      EncodeOptions enc = p.encode() == null ? EncodeOptions.positive() : p.encode();
      Encoding.Read ra = read(sa.source(), p, enc, prog, keep(withFloats, sa, p.aFloats(), 0));
      // B is encoded with A's options: with per-neuron medians, A's medians (A is the reference)
      EncodeOptions encB = ra.options() == null ? enc : ra.options();
      Encoding.Read rb = read(sb.source(), p, encB, prog, keep(withFloats, sb, p.bFloats(), 0));
      SourceColumns.check(ra.columns(), "sample A (" + sa.source().file() + ")", rb.columns(), sb.source().file().toString());
      a = ra.codes();
      b = rb.codes();
      derivedA = withFloats && keepFloats(sa, p.aFloats(), ra.codes(), "A", notes, 0)
          ? ra.activations() : null; // kept by this read: its cap counts the same units as keepFloats
      derivedB = withFloats && keepFloats(sb, p.bFloats(), rb.codes(), "B", notes, 0)
          ? rb.activations() : null;
      floatsFrom = new String[] {floatsFrom(sa, 0), floatsFrom(sb, 0)};
      if (ra.notes() != null) notes.addAll(ra.notes());
      if (rb.notes() != null) notes.addAll(rb.notes());
      if (!a.layout().equals(b.layout()))
        throw new BadInputException(sb.brief() + ": sample B has layout " + b.layout() + " (" + b.layout().bits()
            + " bits), sample A " + a.layout() + " (" + a.layout().bits() + " bits)"
            + notes.stream().filter(n -> n.contains("looks like a row index")).map(n -> "; " + n).collect(java.util.stream.Collectors.joining()));
    }
    CodeLayout full = a.layout();
    if (!p.layers().isEmpty()) {
      CodeLayout target = subLayout(a.layout(), p.layers());
      a = Layers.project(a, target);
      b = Layers.project(b, target);
    }
    checkRows(a, sa, "A");
    checkRows(b, sb, "B");
    FloatFile ffa = !withFloats ? null : derivedA != null ? derivedFloats(derivedA, full, a, floatsFrom[0], "A", notes) : floats(p.aFloats(), sa, p, "A"),
        ffb = !withFloats ? null : derivedB != null ? derivedFloats(derivedB, full, b, floatsFrom[1], "B", notes) : floats(p.bFloats(), sb, p, "B");
    FloatSample fa = ffa == null ? null : ffa.values(), fb = ffb == null ? null : ffb.values();
    for (FloatFile f : new FloatFile[] {ffa, ffb}) // how a float file was read, unless its sample's file (the same) said so
      if (f != null) for (String n : f.notes()) if (!notes.contains(n)) notes.add(n);
    if (fa != null && fb != null) // both hold activations of the same units: read by position like the samples
      SourceColumns.check(ffa.columns(), "float sample A (" + floatsName(p.aFloats(), sa, floatsFrom[0]) + ")", ffb.columns(), floatsName(p.bFloats(), sb, floatsFrom[1]));
    if (fa != null && fb != null && fa.cols() != fb.cols()) {
      throw new BadInputException(floatsName(p.bFloats(), sb, floatsFrom[1]) + ": float sample B has " + fb.cols()
          + " columns, float sample A (" + floatsName(p.aFloats(), sa, floatsFrom[0]) + ") " + fa.cols());
    }
    checkPairing(fa, a, p.aFloats(), sa, "A");
    checkPairing(fb, b, p.bFloats(), sb, "B");
    return compute(a, b, fa, fb, sa.describe(), sb.describe(), p.options(), notes, prog);
  }

  /** The statistics on codes already in memory (and optional floats); independent of files. */
  public static Result compute(CodeBlock a, CodeBlock b, FloatSample fa, FloatSample fb, String describeA, String describeB,
      Options o) {
    return compute(a, b, fa, fb, describeA, describeB, o, List.of(), Progress.NONE);
  }

  private static Result compute(CodeBlock a, CodeBlock b, FloatSample fa, FloatSample fb, String describeA, String describeB,
      Options o, List<String> readNotes, Progress prog) {
    if (!a.layout().equals(b.layout())) throw new BadInputException("samples A and B have different layouts: " + a.layout() + " vs " + b.layout());
    CodeLayout layout = a.layout();
    if (layout.bits() > MAX_BITS)
      throw new BadInputException("codes of " + layout.bits() + " bits (" + layout + "): compare holds pairwise distances in 16 bits, so"
          + " codes of at most " + MAX_BITS + " bits; compare some of the layers (`layers`)");
    int m = a.size(), n = b.size(), segs = layout.segments().size();
    List<String> notes = new ArrayList<>(readNotes);
    Permutations perms = Permutations.seeded(o.seed());

    // agreement kernel: every row, exact permutation test, whole code and each layer
    int[][] ranges = new int[1 + segs][];
    ranges[0] = new int[] {0, layout.bits()};
    for (int s = 0; s < segs; s++) ranges[1 + s] = new int[] {layout.start(s), layout.start(s) + layout.segments().get(s).bits()};
    PermutationTest[] agree = new AgreementMmd(a.concat(b), m).test(ranges, perms, o.permutations(), o.threads());

    // exponential kernel: a pooled distance matrix on at most matrixRows rows per sample
    int[] pa = subsample(m, o.matrixRows(), o.seed()), pb = subsample(n, o.matrixRows(), o.seed() + 1);
    CodeBlock sa = select(a, pa), sb = select(b, pb);
    boolean sub = pa.length < m || pb.length < n;
    if (sub)
      notes.add(String.format(Locale.ROOT, "exponential and Gaussian kernels: a seeded random subsample of %d of %d (A) and %d of %d (B) rows (`matrixRows` %d)",
          pa.length, m, pb.length, n, o.matrixRows()));
    PairDistances dist = new PairDistances(sa.concat(sb), pa.length, o.threads());
    double sigma = o.sigma() != null ? o.sigma() : positiveOrOne(dist.median(0));
    DoubleUnaryOperator expK = d -> Math.exp(-d / sigma);
    PermutationTest expT = dist.kernel(expK).test(pa.length, perms, o.permutations(), o.threads());
    List<Mmd> mmd = List.of(
        new Mmd("agreement", null, agree[0].statistic(), agree[0].pValue(), agree[0].permutations(), agree[0].nullMean(),
            agree[0].nullSd(), m, n, false),
        mmd("exponential", sigma, expT, pa.length, pb.length, sub));
    LinearMmd.Result linear = Math.min(m, n) >= 4 ? LinearMmd.of(a, b, expK, o.seed()) : null;
    if (linear == null)
      notes.add("linear-time MMD^2 not computed: it needs at least 4 rows in each sample (A has " + m + ", B " + n + ")");

    Wasserstein.Result w2 = w2(a, b, o, notes, prog);

    // neurons and layers
    FiringRates.Result rates = FiringRates.of(a, b);
    int moved = 0;
    List<Integer> order = new ArrayList<>();
    for (int i = 0; i < layout.bits(); i++) {
      order.add(i);
      if (rates.q()[i] < o.alpha()) moved++;
    }
    order.sort(Comparator.<Integer>comparingDouble(i -> -Math.abs(rates.z()[i])).thenComparingInt(i -> i));
    List<Neuron> neurons = new ArrayList<>();
    for (int i : order.subList(0, Math.min(o.top(), order.size())))
      neurons.add(new Neuron(Layers.neuron(layout, i), rates.rateA()[i], rates.rateB()[i], rates.z()[i], rates.p()[i], rates.q()[i]));
    List<Layer> layers = new ArrayList<>();
    for (int s = 0; s < segs; s++) {
      int view = segs == 1 ? 0 : 1 + s;
      double ls = positiveOrOne(dist.median(view));
      double diff = 0;
      int lm = 0;
      for (int bit = ranges[1 + s][0]; bit < ranges[1 + s][1]; bit++) {
        diff += Math.abs(rates.rateA()[bit] - rates.rateB()[bit]);
        if (rates.q()[bit] < o.alpha()) lm++;
      }
      int bits = layout.segments().get(s).bits();
      layers.add(new Layer(layout.segments().get(s).name(), bits, agree[1 + s].statistic(), agree[1 + s].pValue(),
          dist.mmd2(view, d -> Math.exp(-d / ls)), ls, diff / bits, lm));
    }

    Floats floats = null;
    String absent = null;
    if (fa != null && fb != null) floats = floats(fa, fb, o, perms, notes);
    else absent = "no float activations for " + (fa == null && fb == null ? "A and B" : fa == null ? "A" : "B")
        + " (give `aFloats`/`bFloats`, or activations files)";

    double floor = 1.0 / (o.permutations() + 1); // the smallest permutation p-value, (0 + 1) / (P + 1)
    if (floor > o.alpha() / 2)
      notes.add(String.format(Locale.ROOT, "with %d permutations (`permutations`) no MMD p-value falls below %s, above the %s each test"
          + " is held to: the verdict cannot find a difference; give at least %d", o.permutations(), fmt(floor), fmt(o.alpha() / 2),
          (int) Math.ceil(2 / o.alpha() - 1 - 1e-9)));
    String verdict = verdict(mmd.get(1), mmd.get(0), moved, neurons, o.alpha());
    return new Result(describeA, describeB, m, n, layout, mmd, linear, w2, floats, absent, List.copyOf(layers),
        List.copyOf(neurons), moved, "Benjamini-Hochberg (1995) false discovery rate over all " + layout.bits() + " neurons",
        o.alpha(), verdict, List.copyOf(notes));
  }

  private static Mmd mmd(String kernel, Double sigma, PermutationTest t, int ra, int rb, boolean sub) {
    return new Mmd(kernel, sigma, t.statistic(), t.pValue(), t.permutations(), t.nullMean(), t.nullSd(), ra, rb, sub);
  }

  /** W2, exact or by Sinkhorn; Sinkhorn's iterations (out of `maxIter`) go to {@code prog}: the longest part of a comparison. */
  private static Wasserstein.Result w2(CodeBlock a, CodeBlock b, Options o, List<String> notes, Progress prog) {
    int m = a.size(), n = b.size();
    if (m == n && m <= o.exactMax()) return Wasserstein.exact(a, b, o.threads());
    int[] pa = subsample(m, o.sinkhornRows(), o.seed() + 2), pb = subsample(n, o.sinkhornRows(), o.seed() + 3);
    String why = m != n ? "sample sizes differ" : "more than `exactMax` " + o.exactMax() + " rows";
    notes.add(String.format(Locale.ROOT, "W2 by Sinkhorn (%s) on %d of %d (A) and %d of %d (B) rows", why, pa.length, m, pb.length, n));
    Wasserstein.Result r = Wasserstein.sinkhorn(select(a, pa), select(b, pb), o.reg(), o.maxIter(), o.tol(), o.threads(),
        it -> prog.update(it, o.maxIter()));
    if (!r.converged())
      notes.add(String.format(Locale.ROOT, "Sinkhorn stopped after %d iterations with marginal error %.3g (tolerance %.3g): W2 is approximate",
          r.iterations(), r.marginalError(), o.tol()));
    return r;
  }

  private static Floats floats(FloatSample fa, FloatSample fb, Options o, Permutations perms, List<String> notes) {
    double fd = Frechet.squared(fa, fb);
    int[] pa = subsample(fa.rows(), o.matrixRows(), o.seed()), pb = subsample(fb.rows(), o.matrixRows(), o.seed() + 1);
    boolean sub = pa.length < fa.rows() || pb.length < fb.rows();
    GaussianMmd.Kernel k = GaussianMmd.of(fa.select(pa).concat(fb.select(pb)), null, o.threads());
    PermutationTest t = k.matrix().test(pa.length, perms, o.permutations(), o.threads());
    return new Floats(fa.rows(), fb.rows(), fa.cols(), fd, mmd("gaussian", k.sigma(), t, pa.length, pb.length, sub));
  }

  private static String verdict(Mmd exp, Mmd agree, int moved, List<Neuron> top, double alpha) {
    StringBuilder v = new StringBuilder();
    String level = fmt(alpha);
    // two tests of one hypothesis: Bonferroni, each at alpha / 2, so the verdict keeps level alpha
    String ps = " (MMD permutation p = " + fmt(exp.pValue()) + " exponential kernel, " + fmt(agree.pValue())
        + " agreement kernel; each against " + fmt(alpha / 2) + ", Bonferroni over the two)";
    if (Math.min(exp.pValue(), agree.pValue()) <= alpha / 2) {
      v.append("A and B differ in code space at level ").append(level).append(ps);
    } else {
      v.append("no difference detected at level ").append(level).append(ps)
          .append("; this does not show that A and B are alike, only that these samples cannot tell them apart");
    }
    if (moved > 0 && !top.isEmpty()) {
      Neuron n = top.get(0);
      v.append("; ").append(moved).append(moved == 1 ? " neuron fires" : " neurons fire").append(" at a different rate (BH q < ")
          .append(level).append("), most: ").append(n.name()).append(" ").append(fmt(n.rateA())).append(" -> ").append(fmt(n.rateB()));
    }
    v.append(". A statistical signal about the model's codes, not a guarantee: check what it means for your use.");
    return v.toString();
  }

  static String fmt(double x) {
    return String.format(Locale.ROOT, "%.3g", x);
  }

  private static double positiveOrOne(double median) {
    return median > 0 ? median : 1;
  }

  // ---- loading

  /** The sample with its file's kind settled by the index, when it was not given. */
  private static Sample ofIndexKind(IndexReader reader, Sample s) {
    if (!s.kindFromIndex()) return s;
    Source src = s.source();
    return Sample.file(QuerySource.sourceOf(reader, null, src.file(), src.header(), "`kind`"));
  }

  /** A sample's codes (and a file's column names) from the index: a file encoded as the index was built, or the examples --where selects. */
  private static QuerySource.Encoded load(IndexReader reader, Sample s, String which, Progress prog, List<String> notes, long keep) {
    if (s.source() != null)
      return QuerySource.encode(reader, s.source(), RowRange.ALL, Encoding.CHUNK, prog, "sample " + which, notes, keep);
    IdSet ids;
    try {
      ids = Where.select(reader.meta(), s.where());
    } catch (BadParameterException e) { // "where: at position ..." would not say which sample's filter
      throw new BadInputException("`" + which.toLowerCase(Locale.ROOT) + "." + e.parameter() + "`" + e.rest(), e);
    }
    if (reader.liveCount() == 0)
      throw new BadInputException(s.brief() + ": sample " + which + " is empty: the index " + reader.dir() + " holds no live examples");
    if (ids.count() < 2) // before the other sample is read
      throw new BadInputException("`" + which.toLowerCase(Locale.ROOT) + ".where` " + BadInputException.quote(s.where()) + " matches "
          + ids.count() + " of the " + reader.liveCount() + " live examples; sample " + which + " needs at least 2");
    int[] live = new int[reader.liveCount()];
    CodeBlock all = reader.liveCodes(live);
    int w = all.wordsPerCode(), bits = all.layout().bits(), kept = 0;
    long[] out = new long[Math.multiplyExact(ids.count(), w)];
    boolean floats = reader.hasMagnitudes() && (keep == Encoding.KEEP_ALL || keep > 0 && (long) ids.count() * bits <= keep);
    float[] values = floats ? new float[Math.multiplyExact(ids.count(), bits)] : null;
    for (int i = 0; i < live.length; i++)
      if (ids.contains(live[i])) {
        if (values != null) reader.magnitudes(live[i], values, kept * bits);
        System.arraycopy(all.words(), i * w, out, kept++ * w, w);
      }
    return new QuerySource.Encoded(new CodeBlock(all.layout(), kept, Arrays.copyOf(out, kept * w)),
        values == null ? null : Arrays.copyOf(values, kept * bits), null, null);
  }

  private static Encoding.Read read(Source s, Params p, EncodeOptions enc, Progress prog, long keep) {
    Source src = s;
    if (s.kind() == Source.Kind.INPUTS && s.model() == null) {
      if (p.model() == null) throw new BadInputException(s.file() + ": inputs need a model (`model` FILE) or an index that stores one");
      src = Source.inputs(s.file(), p.model());
    }
    return Encoding.read(src, Encoding.Model.of(src.model()), enc, p.codesLayout(), RowRange.ALL, Encoding.CHUNK, prog, keep);
  }

  /** Most values (rows x units) of a sample whose floats compare takes itself (a model's activations, kept magnitudes): 256 MiB as doubles. */
  public static final long FLOATS_MAX = 1L << 25;

  /**
   * Where compare can take a sample's floats itself, or null: a file of inputs, the model's hidden
   * activations on it; the examples a filter selects, the index's kept magnitudes ({@code keptBits}
   * bits per unit, 0 when it keeps none).
   */
  private static String floatsFrom(Sample s, int keptBits) {
    if (s.source() != null) return s.source().kind() == Source.Kind.INPUTS ? "the model's hidden activations (after ReLU) on " + s.brief() : null;
    return keptBits > 0 ? "the index's kept " + keptBits + "-bit magnitudes (dequantised) of " + s.brief() : null;
  }

  /** How many floats a sample's read keeps ({@link Encoding#read}): up to {@link #FLOATS_MAX} where compare may take them itself. */
  private static long keep(boolean withFloats, Sample s, Path given, int keptBits) {
    return withFloats && given == null && floatsFrom(s, keptBits) != null ? FLOATS_MAX : 0;
  }

  /**
   * Whether compare takes a sample's floats itself ({@link #floatsFrom}): no floats file given for it,
   * and at most {@link #FLOATS_MAX} values (else a note says why not).
   */
  private static boolean keepFloats(Sample s, Path given, CodeBlock codes, String which, List<String> notes, int keptBits) {
    String from = floatsFrom(s, keptBits);
    if (given != null || from == null) return false;
    long values = (long) codes.size() * codes.layout().bits();
    if (values <= FLOATS_MAX) return true;
    notes.add(String.format(Locale.ROOT, "float sample %s: %s are not taken as its floats: %d rows of %d units are more than %d values;"
        + " give `%sFloats` for the full-precision reference", which, from, codes.size(), codes.layout().bits(), FLOATS_MAX,
        which.toLowerCase(Locale.ROOT)));
    return false;
  }

  /**
   * Floats compare took itself ({@code full}'s columns) as a sample's floats, on the compared layers
   * ({@code codes}' layout), with a note saying where they come from.
   */
  private static FloatFile derivedFloats(float[] acts, CodeLayout full, CodeBlock codes, String from, String which, List<String> notes) {
    int[] cols = Layers.columns(full, codes.layout());
    float[] picked = Layers.pickColumns(acts, codes.size(), full.bits(), cols);
    double[] values = new double[picked.length];
    for (int i = 0; i < picked.length; i++) values[i] = picked[i];
    notes.add("float sample " + which + ": " + from + ", " + cols.length + " units");
    return new FloatFile(new FloatSample(codes.size(), cols.length, values), null, List.of());
  }

  private static CodeLayout subLayout(CodeLayout layout, List<String> names) {
    List<CodeLayout.Segment> segs = new ArrayList<>();
    for (int s : Layers.select(layout, names)) segs.add(layout.segments().get(s));
    return new CodeLayout(segs);
  }

  private static void checkRows(CodeBlock c, Sample s, String which) {
    if (c.size() == 0) throw new BadInputException(s.brief() + ": sample " + which + " is empty");
    if (c.size() < 2) throw new BadInputException(s.brief() + ": sample " + which + " has 1 row; comparing needs at least 2");
  }

  /**
   * Floats and codes of a sample describe the same examples row by row: a different row count means
   * a wrong file (the float reference would silently compare other data).
   */
  private static void checkPairing(FloatSample f, CodeBlock codes, Path given, Sample s, String which) {
    if (f == null || f.rows() == codes.size()) return;
    String option = "`" + which.toLowerCase(Locale.ROOT) + "Floats`";
    throw new BadInputException(floatsFile(given, s) + ": float sample " + which + " has " + f.rows() + " rows, but its codes (" + s.brief()
        + ") have " + codes.size() + "; " + option + " must hold the same examples in the same order");
  }

  /** A float matrix, its file's column names (a CSV header; null when none) and how it was read ({@link MatrixReader#notes()}). */
  record FloatFile(FloatSample values, List<String> columns, List<String> notes) {}

  /** Floats of a sample: the given file, else the sample's own activations file, else null. */
  private static FloatFile floats(Path given, Sample s, Params p, String which) {
    Path file = floatsFile(given, s);
    if (file == null) return null;
    FloatFile f = readFloats(file, p.layers(), p.header());
    int rows = f.values().rows();
    if (rows < 2) throw new BadInputException(file + ": float sample " + which + " has " + rows + " rows; at least 2 are needed");
    return f;
  }

  /** Where a sample's floats come from, for messages: {@link #floatsFile}, else what compare took itself ({@link #floatsFrom}). */
  private static String floatsName(Path given, Sample s, String from) {
    Path file = floatsFile(given, s);
    return file != null ? file.toString() : from;
  }

  /** The file a sample's floats come from: the given one, else the sample's own activations file, else null. */
  private static Path floatsFile(Path given, Sample s) {
    return given != null ? given : s.source() != null && s.source().kind() == Source.Kind.ACTIVATIONS ? s.source().file() : null;
  }

  /** A float matrix: {@code .npy}/{@code .csv} (a CSV header detected), or {@code .npz} members (the named layers, else all) side by side. */
  static FloatSample readFloats(Path file, List<String> layers) {
    return readFloats(file, layers, CsvMatrixReader.Header.AUTO).values();
  }

  /** As {@link #readFloats(Path, List)}, a CSV file's first line read under {@code header}; with its column names. */
  static FloatFile readFloats(Path file, List<String> layers, CsvMatrixReader.Header header) {
    try {
      if (file.getFileName().toString().toLowerCase(Locale.ROOT).endsWith(".npz")) {
        try (NpzReader z = NpzReader.open(file)) {
          List<String> names = layers.isEmpty() ? z.names() : layers;
          FloatSample out = null;
          for (String name : names) {
            if (!z.names().contains(name)) throw new BadInputException(file + ": no member '" + name + "'; members: " + z.names());
            try (MatrixReader r = z.member(name)) {
              FloatSample part = readAll(r);
              out = out == null ? part : sideBySide(out, part, file);
            }
          }
          if (out == null) throw new BadInputException(file + ": no arrays");
          return new FloatFile(out, null, List.of());
        }
      }
      try (MatrixReader r = Encoders.openMatrix(file, header)) {
        return new FloatFile(readAll(r), r.columnNames(), List.copyOf(r.notes()));
      }
    } catch (IOException e) {
      throw new UncheckedIOException(file + ": " + e.getMessage(), e);
    }
  }

  private static FloatSample readAll(MatrixReader r) throws IOException {
    int cols = r.cols();
    double[] all = new double[0];
    double[] buf = new double[Math.max(1, (1 << 16) / Math.max(1, cols)) * cols];
    int rows = 0, got;
    while ((got = r.read(buf, buf.length / cols)) > 0) {
      if ((long) (rows + got) * cols > Integer.MAX_VALUE - 16) throw new BadInputException(r.source() + ": too many float values to hold");
      if ((rows + got) * cols > all.length) all = Arrays.copyOf(all, Math.max((rows + got) * cols, all.length * 2));
      for (int i = 0; i < got * cols; i++)
        if (Math.abs(buf[i]) > Float.MAX_VALUE) // its square overflows the covariance: activations are float32
          throw new BadInputException(r.source() + ": row " + (rows + i / cols) + ", column " + (i % cols) + " (0-based): value " + buf[i]
              + " does not fit float32 (at most about 3.4e38); activations that large cannot be compared");
      System.arraycopy(buf, 0, all, rows * cols, got * cols);
      rows += got;
    }
    return new FloatSample(rows, cols, Arrays.copyOf(all, rows * cols));
  }

  private static FloatSample sideBySide(FloatSample x, FloatSample y, Path file) {
    if (x.rows() != y.rows()) throw new BadInputException(file + ": members with " + x.rows() + " and " + y.rows() + " rows");
    int c = x.cols() + y.cols();
    double[] out = new double[x.rows() * c];
    for (int i = 0; i < x.rows(); i++) {
      System.arraycopy(x.values(), i * x.cols(), out, i * c, x.cols());
      System.arraycopy(y.values(), i * y.cols(), out, i * c + x.cols(), y.cols());
    }
    return new FloatSample(x.rows(), c, out);
  }

  /** All of {@code 0..n-1} when {@code n <= max}, else {@code max} of them at random (seeded), ascending. */
  static int[] subsample(int n, int max, long seed) {
    int[] order = new int[n];
    if (n <= max) {
      for (int i = 0; i < n; i++) order[i] = i;
      return order;
    }
    Permutations.seeded(seed).fill(0, order);
    int[] pick = Arrays.copyOf(order, max);
    Arrays.sort(pick);
    return pick;
  }

  private static CodeBlock select(CodeBlock c, int[] rows) {
    if (rows.length == c.size()) return c;
    int w = c.wordsPerCode();
    long[] out = new long[rows.length * w];
    for (int i = 0; i < rows.length; i++) System.arraycopy(c.words(), rows[i] * w, out, i * w, w);
    return new CodeBlock(c.layout(), rows.length, out);
  }
}
