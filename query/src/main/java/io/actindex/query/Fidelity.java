package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hamming;
import io.actindex.core.Hits;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.encode.io.MatrixReader;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.Magnitudes;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;

/**
 * How faithful binary codes are to the float activations they came from, measured on the user's
 * own data: for {@code queries} sampled rows against all other rows (leave one out),
 * <ul>
 *   <li>overlap: the share of the exact cosine k-NN (on the float activations) that the exact
 *       Hamming k-NN holds (Hamming ties broken by ascending row, as {@code nearest} does);</li>
 *   <li>Spearman's rank correlation of Hamming and cosine distance over {@code pairs} random
 *       pairs of distinct rows, or over every pair once when there are no more than {@code pairs}
 *       ({@link Spearman}, ties averaged);</li>
 *   <li>the share of queries whose k-th Hamming distance is tied (more than k other rows lie
 *       within it, so the order of ties decides the k-NN), and the mean k-th Hamming distance;</li>
 *   <li>with labels: k-NN label accuracy (majority of the k labels; a tie goes to the label met
 *       first in rank order) under Hamming, Hamming refined ({@link Refine}: the candidates by
 *       Hamming, then cosine on the kept, dequantised magnitudes), cosine on the floats, and
 *       Euclidean on the raw inputs when the model's inputs are given.</li>
 * </ul>
 * A short verdict sums it up. It is a measurement on this data, not a guarantee for other inputs.
 */
public final class Fidelity {
  private Fidelity() {}

  public static final int DEFAULT_QUERIES = 1000, DEFAULT_PAIRS = 20000;

  /**
   * The most pairs Spearman's correlation takes: each costs two doubles and their ranks, so 10M is
   * about a gigabyte, and its standard error (about 1/sqrt(pairs)) is long below any difference
   * that matters.
   */
  public static final int MAX_PAIRS = 10_000_000;

  /**
   * {@code queries >= 1} sampled rows (at most the rows there are), {@code k >= 1},
   * {@code candidates >= k} for the refined k-NN, {@code pairs} from 2 to {@link #MAX_PAIRS} for Spearman, {@code seed} for
   * the samples, {@code threads >= 1}.
   */
  public record Params(int queries, int k, int candidates, int pairs, long seed, int threads) {
    public Params {
      if (queries < 1) throw new BadParameterException("queries", " must be at least 1, got " + queries);
      if (k < 1) throw new BadParameterException("k", " must be at least 1, got " + k);
      if (candidates < k) throw new BadParameterException("candidates", " (" + candidates + ") must be at least `k` (" + k + ")");
      if (pairs < 2 || pairs > MAX_PAIRS) throw new BadParameterException("pairs", " must be from 2 to " + MAX_PAIRS + ", got " + pairs);
      Parallel.checkThreads(threads);
    }
  }

  /**
   * The rows compared: codes, the float activations (row-major, one per code bit),
   * {@code floatSource} saying where the floats came from, the kept magnitudes as the refinement
   * sees them ({@code kept}, null when none; {@code keptBits}), labels (null = none; entries may be
   * null) and the raw inputs ({@code inputWidth} values per row; null = none); {@code notes}: how
   * the files were read (a CSV header, labels that write one number two ways).
   */
  public record Data(CodeBlock codes, float[] floats, String floatSource, Refine.Vectors kept, int keptBits, String[] labels,
      float[] inputs, int inputWidth, List<String> notes) {}

  /**
   * k-NN label accuracy over the {@code labeled} sampled queries that carry a label; {@code refined}
   * is null without kept magnitudes, {@code euclideanInputs} null without inputs. A query whose k
   * neighbours all lack a label counts as wrong; {@code noLabelledNeighbour} says how many did, per metric;
   * {@code labelAlone}: the labelled queries whose label no other row carries, which no neighbour can match
   * (every label distinct: a continuous target such as a price, or an id, given as the label).
   */
  public record Accuracy(int labeled, double hamming, Double refined, double cosine, Double euclideanInputs,
      NoLabelledNeighbour noLabelledNeighbour, int labelAlone) {}

  /**
   * Per metric, the labelled queries none of whose k neighbours carries a label (each counted wrong
   * in that metric's accuracy); null where the accuracy is null.
   */
  public record NoLabelledNeighbour(int hamming, Integer refined, int cosine, Integer euclideanInputs) {
    /** Whether any metric had such a query. */
    public boolean any() {
      return most() > 0;
    }

    /** The largest count over the metrics. */
    public int most() {
      return Math.max(Math.max(hamming, cosine), Math.max(refined == null ? 0 : refined, euclideanInputs == null ? 0 : euclideanInputs));
    }
  }

  /**
   * Above this share of the labelled queries without a labelled neighbour (under any metric), the
   * verdict does not compare the accuracies: too many of their answers are wrong for want of a label.
   */
  static final double MOST_UNANSWERED = 0.10;

  private static boolean tooFewLabels(Accuracy acc) {
    return acc.noLabelledNeighbour() != null && acc.noLabelledNeighbour().most() > MOST_UNANSWERED * acc.labeled();
  }

  /** The measurements; {@code accuracy} is null without labels. */
  public record Result(int examples, int queries, int k, long seed, String floatSource, int magnitudeBits, int candidates,
      double overlap, double spearman, int pairs, double tiedShare, double meanKthDistance, Accuracy accuracy,
      String verdict) {}

  /**
   * Rows of an activations file (one layer per .npz member), labels from the metadata CSV (nullable);
   * {@code header}: whether a CSV file's first line is a header (null = detect).
   */
  public static Data fromActivations(Path file, CsvMatrixReader.Header header, MetaCsv.Options meta, int bits, Progress progress) {
    if (!Magnitudes.supported(bits)) throw new BadInputException("bits per kept magnitude must be 2, 4 or 8, got " + bits);
    Encoding.Read read = Encoding.read(Source.activations(file).withHeader(header), null, EncodeOptions.positive(), null, RowRange.ALL,
        Encoding.CHUNK, progress == null ? Progress.NONE : progress, true);
    CodeBlock codes = read.codes();
    int n = codes.size(), d = codes.layout().bits();
    if (n < 2) throw new BadInputException(file + ": " + n + " rows; fidelity needs at least 2");
    String[] labels = null;
    List<String> notes = new java.util.ArrayList<>(read.notes());
    if (meta != null) {
      List<Map<String, String>> rows = MetaCsv.read(meta);
      if (rows.size() != n) throw new BadInputException(meta.file() + ": " + rows.size() + " data rows, but " + file + " has " + n + " rows");
      String spelt = LabelSpellings.note(meta.file().toString(), rows, null);
      if (spelt != null) notes.add(spelt);
      labels = rows.stream().map(r -> r.get("label")).toArray(String[]::new);
      if (Arrays.stream(labels).allMatch(l -> l == null)) labels = null;
    }
    Magnitudes kept = Magnitudes.quantise(read.activations(), n, d, bits);
    return new Data(codes, read.activations(), "float activations of " + file, (ord, out) -> kept.dequantise(ord, out, 0), bits,
        labels, null, 0, List.copyOf(notes));
  }

  /**
   * The live rows of an index. Floats: the model's activations on {@code inputs} when given (the
   * rows the index was built from, in id order; the index must hold the model, and every live
   * row must give its stored code), else the kept magnitudes, dequantised. Labels from the
   * metadata store. {@code header}: whether the first line of {@code inputs}, a CSV file, is a header (null = detect).
   */
  public static Data fromIndex(IndexReader r, Path inputs, CsvMatrixReader.Header header, Progress progress) {
    int n = r.liveCount(), d = r.layout().bits();
    int[] ids = new int[n];
    CodeBlock codes = r.liveCodes(ids);
    if (n < 2)
      throw new BadInputException("the index " + r.dir() + " holds " + (n == 0 ? "no live examples" : "1 live example") + "; fidelity needs at least 2");
    LabelIndex labelIndex = LabelIndex.of(r.meta(), r.maxId());
    String[] labels = new String[n];
    boolean any = false;
    for (int i = 0; i < n; i++) any |= (labels[i] = labelIndex.label(ids[i])) != null;
    Refine.Vectors kept = r.hasMagnitudes() ? (ord, out) -> r.magnitudes(ids[ord], out, 0) : null;
    int keptBits = r.hasMagnitudes() ? r.magnitudeBits() : 0;
    if (inputs == null) {
      if (kept == null)
        throw new BadInputException(Refine.noMagnitudes(r) + "; or give the model's inputs the index was built from with `inputs`");
      float[] floats = new float[Math.multiplyExact(n, d)];
      for (int i = 0; i < n; i++) r.magnitudes(ids[i], floats, i * d);
      return new Data(codes, floats, "kept " + keptBits + "-bit magnitudes of index " + r.dir() + " (dequantised)", kept, keptBits,
          any ? labels : null, null, 0, List.of());
    }
    if (!BuildInfo.fromProperties(r.properties(), r.dir().toString()).hasModel())
      throw new BadInputException(inputs + ": `inputs` needs an index built from a model (build `model`), and index " + r.dir()
          + " holds none; leave `inputs` out to measure on its kept magnitudes");
    List<String> notes = new java.util.ArrayList<>();
    QuerySource.Encoded enc = QuerySource.encode(r, Source.inputs(inputs, null).withHeader(header), RowRange.ALL, Encoding.CHUNK, progress,
        "inputs", notes, Encoding.KEEP_ALL);
    if (enc.codes().size() != r.maxId())
      throw new BadInputException(inputs + ": " + enc.codes().size() + " rows, but index " + r.dir() + " was built from "
          + r.maxId() + " rows; give the inputs the index was built from, in id order");
    float[] floats = new float[Math.multiplyExact(n, d)];
    for (int i = 0; i < n; i++) {
      if (!Arrays.equals(enc.codes().code(ids[i]), codes.code(i)))
        throw new BadInputException(inputs + ": row " + ids[i] + " does not give the code stored for id " + ids[i]
            + "; give the inputs the index was built from, in id order");
      System.arraycopy(enc.activations(), ids[i] * d, floats, i * d, d);
    }
    float[][] raw = readMatrix(inputs, header);
    float[] in = new float[Math.multiplyExact(n, raw[0].length)];
    int width = raw[0].length;
    for (int i = 0; i < n; i++) System.arraycopy(raw[1], ids[i] * width, in, i * width, width);
    return new Data(codes, floats, "the model's float activations on " + inputs, kept, keptBits, any ? labels : null, in, width,
        List.copyOf(notes));
  }

  /** {@code [0]} has the width as its length, {@code [1]} the rows (row-major). */
  private static float[][] readMatrix(Path file, CsvMatrixReader.Header header) {
    try (MatrixReader m = Encoders.openMatrix(file, header)) {
      int cols = m.cols();
      double[] chunk = new double[4096 * cols];
      float[] all = new float[0];
      int rows = 0, got;
      while ((got = m.read(chunk, 4096)) > 0) {
        all = Arrays.copyOf(all, Math.multiplyExact(rows + got, cols));
        for (int i = 0; i < got * cols; i++) all[rows * cols + i] = (float) chunk[i];
        rows += got;
      }
      return new float[][] {new float[cols], all};
    } catch (IOException e) {
      throw new UncheckedIOException(file + ": " + e.getMessage(), e);
    }
  }

  public static Result run(Data data, Params p, Progress progress) {
    CodeBlock codes = data.codes();
    int n = codes.size(), d = codes.layout().bits(), w = codes.wordsPerCode();
    if (p.queries() > n)
      throw new BadParameterException("queries", " " + p.queries() + " is larger than the " + n + " examples there are");
    if (p.k() > n - 1) throw new BadParameterException("k", " " + p.k() + " needs more than the " + (n - 1) + " other examples there are");
    int c = Math.min(p.candidates(), n - 1);
    int[] sample = sample(n, p.queries(), new SplittableRandom(p.seed()));
    double[] norms = norms(data.floats(), n, d);
    long[] words = codes.words();
    PerQuery[] per = new PerQuery[sample.length];
    int blocks = (sample.length + FidelityScan.BLOCK - 1) / FidelityScan.BLOCK;
    Progress queries = progress == null ? Progress.NONE
        : (done, total) -> progress.update(Math.min(done * FidelityScan.BLOCK, sample.length), sample.length);
    Parallel.forEach(blocks, p.threads(), queries, blk -> {
      int from = blk * FidelityScan.BLOCK, to = Math.min(from + FidelityScan.BLOCK, sample.length);
      FidelityScan scan = FidelityScan.of(sample, from, to, words, w, data.floats(), d, norms, n, p.k());
      for (int t = from; t < to; t++) per[t] = measure(data, p, c, sample[t], scan.hamming[t - from], scan.cosineTop[t - from]);
    });
    double overlap = 0, tied = 0, kthSum = 0;
    int labeled = 0, alone = 0;
    Map<String, Integer> labelCount = new HashMap<>();
    if (data.labels() != null) for (String l : data.labels()) if (l != null) labelCount.merge(l, 1, Integer::sum);
    Tally ham = new Tally(), ref = new Tally(), cos = new Tally(), euc = new Tally();
    for (PerQuery r : per) {
      overlap += r.overlap;
      tied += r.tied ? 1 : 0;
      kthSum += r.kth;
      if (r.label == null) continue;
      labeled++;
      if (labelCount.get(r.label) == 1) alone++;
      ham.add(r.label, r.hamVote);
      ref.add(r.label, r.refVote);
      cos.add(r.label, r.cosVote);
      euc.add(r.label, r.eucVote);
    }
    int m = per.length;
    boolean refined = data.kept() != null, inputs = data.inputs() != null;
    Accuracy acc = labeled == 0 ? null
        : new Accuracy(labeled, ham.right / (double) labeled, refined ? ref.right / (double) labeled : null,
            cos.right / (double) labeled, inputs ? euc.right / (double) labeled : null,
            new NoLabelledNeighbour(ham.none, refined ? ref.none : null, cos.none, inputs ? euc.none : null), alone);
    long distinct = (long) n * (n - 1) / 2;
    int pairs = distinct <= p.pairs() ? (int) distinct : p.pairs();
    double rho = spearman(data, norms, pairs, distinct <= p.pairs(), new SplittableRandom(p.seed() ^ 0x5DEECE66DL));
    double ov = overlap / m, ts = tied / m;
    return new Result(n, m, p.k(), p.seed(), data.floatSource(), data.keptBits(), c, ov, rho, pairs, ts, kthSum / m, acc,
        verdict(ov, rho, ts, acc, p.k(), c, n));
  }

  /** One query's measurements from its Hamming distances to every row ({@code ham}) and its cosine k-NN ({@code cosTop}). */
  private static PerQuery measure(Data data, Params p, int c, int q, int[] ham, int[] cosTop) {
    int n = ham.length, d = data.codes().layout().bits();
    boolean labels = data.labels() != null;
    int[] count = new int[d + 2];
    for (int j = 0; j < n; j++) if (j != q) count[ham[j]]++;
    int kth = distanceAtRank(count, p.k());
    int within = 0;
    for (int t2 = 0; t2 <= kth; t2++) within += count[t2];
    int[] hamTop = hammingTop(ham, kth, p.k());
    int both = 0;
    for (int a : hamTop) for (int b : cosTop) if (a == b) both++;
    String label = labels ? data.labels()[q] : null;
    String hamVote = null, refVote = null, cosVote = null, eucVote = null;
    if (label != null) {
      hamVote = vote(data.labels(), hamTop);
      cosVote = vote(data.labels(), cosTop);
      if (data.kept() != null) {
        int dc = distanceAtRank(count, c);
        int[] cands = java.util.stream.IntStream.range(0, n).filter(j -> ham[j] <= dc).toArray();
        int[] cd = new int[cands.length];
        for (int i = 0; i < cands.length; i++) cd[i] = ham[cands[i]];
        float[] query = Arrays.copyOfRange(data.floats(), q * d, q * d + d);
        Refine.Ranked r = Refine.rerank(Hits.sorted(cands, cd, cands.length), query, data.kept(), new float[d], Refine.Metric.COSINE, null, p.k());
        refVote = vote(data.labels(), r.ids());
      }
      if (data.inputs() != null) {
        double[] euc = new double[n];
        int iw = data.inputWidth();
        for (int j = 0; j < n; j++) euc[j] = euclidean(data.inputs(), q, j, iw);
        euc[q] = Double.POSITIVE_INFINITY;
        eucVote = vote(data.labels(), top(euc, p.k()));
      }
    }
    return new PerQuery(both / (double) p.k(), within > p.k(), kth, label, hamVote, refVote, cosVote, eucVote);
  }

  /**
   * One query's outcome: its label (null = none) and the majority label of its k neighbours under each
   * metric (null when none of them has a label, or when the metric was not measured).
   */
  private record PerQuery(double overlap, boolean tied, int kth, String label, String hamVote, String refVote, String cosVote,
      String eucVote) {}

  /** Labelled queries one metric got right, and those whose neighbours had no label (counted wrong). */
  private static final class Tally {
    int right, none;

    void add(String label, String vote) {
      if (vote == null) none++;
      else if (vote.equals(label)) right++;
    }
  }

  /** The short verdict in words. */
  static String verdict(double overlap, double rho, double tied, Accuracy acc, int k, int c, int n) {
    StringBuilder v = new StringBuilder();
    double chance = (double) k / (n - 1); // expected overlap of k rows drawn at random from the n - 1 others
    if (chance >= 0.5) v.append(String.format(java.util.Locale.ROOT,
        "Too few rows to judge: with k = %d of the %d other rows as neighbours, chance alone gives an overlap of %.2f.", k, n - 1, chance));
    else if (acc != null && acc.labelAlone() > MOST_UNANSWERED * acc.labeled())
      v.append(String.format(java.util.Locale.ROOT, "Labels too rarely shared to compare the accuracies: %d of the %d labelled queries"
          + " (%.0f%%) carry a label no other row has, so no neighbour can match it under any measure (a continuous target, such as"
          + " a price, or an id given as the label?); the accuracies say nothing about the codes here: give class labels.",
          acc.labelAlone(), acc.labeled(), 100.0 * acc.labelAlone() / acc.labeled()));
    else if (acc != null && tooFewLabels(acc))
      v.append(String.format(java.util.Locale.ROOT, "Too few labels to compare the accuracies: under at least one measure, %d of the %d labelled"
          + " queries (%.0f%%) have no labelled example among their %d nearest and count as wrong (see no_labelled_neighbour);"
          + " label more examples and measure again.", acc.noLabelledNeighbour().most(), acc.labeled(),
          100.0 * acc.noLabelledNeighbour().most() / acc.labeled(), k));
    else if (acc != null) {
      double gap = acc.cosine() - acc.hamming();
      if (gap <= 0.01) v.append("Codes keep what the float activations know about labels here: Hamming ").append(k)
          .append("-NN accuracy is within 1 point of cosine on the floats.");
      else {
        v.append(String.format(java.util.Locale.ROOT, "Codes lose %.1f points of %d-NN label accuracy against cosine on the floats", 100 * gap, k));
        if (acc.refined() != null && acc.cosine() - acc.refined() <= 0.01)
          v.append(String.format(java.util.Locale.ROOT, "; re-ranking %d Hamming candidates by the kept magnitudes closes the gap (use `Refine.run`).", c));
        else if (acc.refined() != null)
          v.append(String.format(java.util.Locale.ROOT, "; re-ranking %d Hamming candidates by the kept magnitudes recovers %.1f of them.", c,
              100 * (acc.refined() - acc.hamming())));
        else v.append("; build with kept magnitudes to refine.");
      }
    } else if (overlap >= 0.7) v.append("Hamming and cosine neighbours largely agree.");
    else if (overlap >= 0.4) v.append("Hamming and cosine neighbours agree only in part.");
    else v.append("Hamming neighbours mostly differ from cosine neighbours on the floats.");
    v.append(String.format(java.util.Locale.ROOT, " Overlap %.2f, ", overlap))
        .append(Double.isNaN(rho) ? "Spearman undefined (one of the two distances is the same for every pair)."
            : String.format(java.util.Locale.ROOT, "Spearman %.2f.", rho));
    if (tied >= 0.2)
      v.append(String.format(java.util.Locale.ROOT, " %.0f%% of queries have more than %s within the Hamming distance of their %s,"
          + " so the order among ties (ascending id) decides part of the answer.", 100 * tied, k == 1 ? "1 other row" : k + " other rows",
          k == 1 ? "nearest neighbour" : "neighbour at rank " + k));
    v.append(" Measured on this data only: check again on data like your use.");
    return v.toString();
  }

  /** The smallest distance D such that at least {@code rank} rows lie within D ({@code count} by distance). */
  private static int distanceAtRank(int[] count, int rank) {
    int cum = 0;
    for (int dist = 0; dist < count.length; dist++) {
      cum += count[dist];
      if (cum >= rank) return dist;
    }
    return count.length - 1;
  }

  /** The k nearest by (Hamming distance, row): every row below {@code kth}, then the first rows at it. */
  private static int[] hammingTop(int[] ham, int kth, int k) {
    int[] out = new int[k];
    int at = 0;
    for (int j = 0; j < ham.length && at < k; j++) if (ham[j] < kth) out[at++] = j;
    for (int j = 0; j < ham.length && at < k; j++) if (ham[j] == kth) out[at++] = j;
    Integer[] boxed = Arrays.stream(out).boxed().toArray(Integer[]::new);
    Arrays.sort(boxed, (a, b) -> ham[a] != ham[b] ? Integer.compare(ham[a], ham[b]) : Integer.compare(a, b));
    return Arrays.stream(boxed).mapToInt(Integer::intValue).toArray();
  }

  /** The k smallest values by (value, row), in that order. */
  private static int[] top(double[] v, int k) {
    java.util.PriorityQueue<Integer> heap = new java.util.PriorityQueue<>(
        (a, b) -> v[a] != v[b] ? Double.compare(v[b], v[a]) : Integer.compare(b, a));
    for (int j = 0; j < v.length; j++) {
      if (heap.size() < k) heap.add(j);
      else {
        int worst = heap.peek();
        if (v[j] < v[worst] || (v[j] == v[worst] && j < worst)) {
          heap.poll();
          heap.add(j);
        }
      }
    }
    Integer[] out = heap.toArray(new Integer[0]);
    Arrays.sort(out, (a, b) -> v[a] != v[b] ? Double.compare(v[a], v[b]) : Integer.compare(a, b));
    return Arrays.stream(out).mapToInt(Integer::intValue).toArray();
  }

  /** Majority label of the ranked rows (unlabelled ones skipped); a tie goes to the label met first. */
  static String vote(String[] labels, int[] ranked) {
    Map<String, Integer> tally = new HashMap<>();
    String best = null;
    int bestCount = 0;
    for (int j : ranked) {
      String l = labels[j];
      if (l == null) continue;
      tally.merge(l, 1, Integer::sum);
    }
    for (int j : ranked) {
      String l = labels[j];
      if (l != null && tally.get(l) > bestCount) {
        best = l;
        bestCount = tally.get(l);
      }
    }
    return best;
  }

  private static int[] sample(int n, int m, SplittableRandom rnd) {
    int[] all = new int[n];
    for (int i = 0; i < n; i++) all[i] = i;
    for (int i = 0; i < m; i++) {
      int j = i + rnd.nextInt(n - i), t = all[i];
      all[i] = all[j];
      all[j] = t;
    }
    return Arrays.copyOf(all, m);
  }

  private static double[] norms(float[] v, int n, int d) {
    double[] out = new double[n];
    for (int i = 0; i < n; i++) {
      double s = 0;
      for (int j = 0; j < d; j++) s += (double) v[i * d + j] * v[i * d + j];
      out[i] = Math.sqrt(s);
    }
    return out;
  }

  /** Cosine distance as {@link Refine.Metric#COSINE} defines it, from precomputed norms. */
  private static double cosine(float[] v, int a, int b, int d, double[] norms) {
    if (norms[a] == 0 || norms[b] == 0) return 1;
    double dot = 0;
    for (int j = 0; j < d; j++) dot += (double) v[a * d + j] * v[b * d + j];
    return 1 - dot / (norms[a] * norms[b]);
  }

  private static double euclidean(float[] v, int a, int b, int d) {
    double s = 0;
    for (int j = 0; j < d; j++) {
      double x = (double) v[a * d + j] - v[b * d + j];
      s += x * x;
    }
    return Math.sqrt(s);
  }

  /**
   * Spearman's rho over {@code pairs} pairs of distinct rows: every pair once when {@code all} (there
   * are no more than were asked for, so the exact value needs no sample), else drawn at random.
   */
  private static double spearman(Data data, double[] norms, int pairs, boolean all, SplittableRandom rnd) {
    CodeBlock codes = data.codes();
    int n = codes.size(), d = codes.layout().bits(), w = codes.wordsPerCode();
    double[] h = new double[pairs], c = new double[pairs];
    int nextA = 0, nextB = 1;
    for (int t = 0; t < pairs; t++) {
      int a, b;
      if (all) {
        a = nextA;
        b = nextB;
        if (++nextB == n) nextB = ++nextA + 1;
      } else {
        a = rnd.nextInt(n);
        b = rnd.nextInt(n - 1);
        if (b >= a) b++;
      }
      h[t] = Hamming.distance(codes.words(), a * w, codes.words(), b * w, w);
      c[t] = cosine(data.floats(), a, b, d, norms);
    }
    return Spearman.rho(h, c);
  }
}
