package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.CodeBlock;
import io.actindex.edge.BundleFormat;
import io.actindex.edge.EdgeBundle;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import io.actindex.encode.mlp.DigitsData;
import io.actindex.encode.mlp.Mlp;
import io.actindex.encode.mlp.MlpTrainer;
import io.actindex.index.store.IndexReader;
import java.io.IOException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.SplittableRandom;
import org.ejml.data.DMatrixRMaj;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Open data end to end: the UCI digits (Alpaydin &amp; Kaynak 1998, CC BY 4.0; the 1,797-sample
 * copy vendored in encode's test resources). Per seed: shuffle digits 0-4 into 60% training (the
 * index, built from the model and its inputs), 20% calibration and 20% held-out in-distribution
 * inputs; digits 5-9 are out of distribution. The project's trainer fits a (64, 32) ReLU network on
 * the training part; {@code ood calibrate} then {@code ood eval} give AUROC and FPR at 95% TPR for
 * the code score (every k, statistic and layer set), the k-NN score on float activations and the
 * maximum-softmax baseline, and the refined score (float distance among the Hamming candidates, the
 * training floats' rows being the index ids), and the refined and euclidean scores from the index's kept magnitudes. Floors are set from the measurement (see docs/commands/ood.md) with a
 * margin. The same run checks the edge bundle with the model and the compiled C source: raw
 * inputs encode to the index's codes and score as the index scores them.
 */
@Tag("slow")
class DigitsOodTest {
  @TempDir Path tmp;

  static final long[] SEEDS = {11, 22, 33};
  // floors: the measured minimum over the three seeds (2026-12-03) minus a margin; all values in docs/commands/ood.md.
  // code k=1 kth all layers: 0.7775 / 0.9045 / 0.7598; best code variant: 0.7775 / 0.9104 / 0.7960;
  // float k-NN (k=1): 0.9762 / 0.9889 / 0.9934; softmax baseline: 0.9391 / 0.9432 / 0.9345;
  // refined (float distance among the 100 nearest codes): 0.9762 / 0.9890 / 0.9934; refined from the index's kept 8-bit magnitudes
  // (cosine, 100 candidates, the default calibration): 0.9763 / 0.9890 / 0.9934; euclidean from the same kept magnitudes (listed by the
  // same ood eval, 2026-12-05): 0.9821 / 0.9868 / 0.9913
  static final double CODE_AUROC_FLOOR = 0.70, BEST_CODE_AUROC_FLOOR = 0.74, FLOAT_AUROC_FLOOR = 0.93, SOFTMAX_AUROC_FLOOR = 0.88,
      REFINED_AUROC_FLOOR = 0.93, KEPT_AUROC_FLOOR = 0.93;

  static final int CANDIDATES = 100; // measured also with 10 and 30 candidates: AUROC within 0.003 of these

  static Path npy(Path file, List<double[]> rows) throws IOException {
    try (NpyWriter w = NpyWriter.create(file, NpyDtype.FLOAT32, rows.get(0).length)) {
      for (double[] r : rows) w.write(r, 1);
      w.commit();
    }
    return file;
  }

  /** The model's hidden activations (all hidden layers side by side) of some rows. */
  static List<double[]> hidden(Mlp mlp, List<double[]> rows) {
    DMatrixRMaj[] out = mlp.forward(new DMatrixRMaj(rows.toArray(new double[0][])));
    List<double[]> h = new ArrayList<>();
    for (int i = 0; i < rows.size(); i++) {
      double[] r = new double[0];
      for (int l = 0; l < out.length - 1; l++) {
        double[] part = Arrays.copyOfRange(out[l].data, i * out[l].numCols, (i + 1) * out[l].numCols);
        double[] joined = Arrays.copyOf(r, r.length + part.length);
        System.arraycopy(part, 0, joined, r.length, part.length);
        r = joined;
      }
      h.add(r);
    }
    return h;
  }

  @Test
  void codeScoreFloatScoreAndSoftmaxOnHeldOutDigits() throws Exception {
    DigitsData d = DigitsData.load();
    List<String> report = new ArrayList<>();
    double minCode = 1, minBest = 1, minFloat = 1, minSoftmax = 1, minRefined = 1, refinedVsSoftmax = 1, minKept = 1, keptVsSoftmax = 1,
        minEuclidean = 1;
    for (long seed : SEEDS) {
      List<double[]> train = new ArrayList<>(), cal = new ArrayList<>(), in = new ArrayList<>(), out = new ArrayList<>();
      List<Integer> trainY = new ArrayList<>();
      int[] order = shuffled(d.x().length, seed);
      int low = 0;
      for (int i : order) if (d.y()[i] < 5) low++;
      int seen = 0;
      for (int i : order) {
        if (d.y()[i] >= 5) {
          out.add(d.x()[i]);
          continue;
        }
        if (seen < low * 0.6) {
          train.add(d.x()[i]);
          trainY.add(d.y()[i]);
        } else if (seen < low * 0.8) cal.add(d.x()[i]);
        else in.add(d.x()[i]);
        seen++;
      }
      Mlp mlp = MlpTrainer.train(train.toArray(new double[0][]), trainY.stream().mapToInt(Integer::intValue).toArray(), 5,
          new MlpTrainer.Config(new int[] {64, 32}, 60, 32, 1e-3, seed));
      Path s = tmp.resolve("s" + seed);
      java.nio.file.Files.createDirectories(s);
      Path model = s.resolve("mlp.safetensors");
      mlp.save(model, null);
      Path dir = s.resolve("idx");
      IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.inputs(npy(s.resolve("train.npy"), train), model), null,
          EncodeOptions.positive(), null, 0), Progress.NONE);
      Path calFile = npy(s.resolve("cal.npy"), cal), inFile = npy(s.resolve("in.npy"), in), outFile = npy(s.resolve("out.npy"), out);
      OodCalibrate.run(dir, Source.inputs(calFile, null), RowRange.ALL, new OodCalibrate.Params(1, Statistic.KTH, 0.95, null, false, OodScorer.Kind.CODE, 0),
          Progress.NONE);
      OodEval.Result e;
      try (IndexReader r = IndexReader.open(dir)) {
        e = OodEval.run(r, new OodEval.Params(Source.inputs(inFile, null), Source.inputs(outFile, null), npy(s.resolve("in-f.npy"), hidden(mlp, in)),
            npy(s.resolve("out-f.npy"), hidden(mlp, out)), npy(s.resolve("train-f.npy"), hidden(mlp, train)), CANDIDATES, null), Progress.NONE);
        if (seed == SEEDS[0]) checkEdgeWithModel(r, s, in, out);
        rangeGuard(r, seed, train, in, out, report);
      }
      // the scores from the index's own kept magnitudes (8 bits, the default): the default calibration of this index is the euclidean
      // score; eval gives the refined (cosine) score beside it at the same k, statistic, layers and candidates
      OodCalibrate.Result rc = OodCalibrate.run(dir, Source.inputs(calFile, null), RowRange.ALL, new OodCalibrate.Params(1, Statistic.KTH, 0.95, null, false),
          Progress.NONE);
      assertThat(rc.scoring().kind()).as("default score on an index with magnitudes").isEqualTo(OodScorer.Kind.EUCLIDEAN);
      OodEval.Result m;
      try (IndexReader r = IndexReader.open(dir)) {
        m = OodEval.run(r, new OodEval.Params(Source.inputs(inFile, null), Source.inputs(outFile, null), null, null, null), Progress.NONE);
      }
      report.add(String.format(Locale.ROOT, "seed %d refined from kept magnitudes: AUROC %.4f FPR95 %.4f AUPR-in %.4f AUPR-out %.4f; softmax %.4f",
          seed, m.refined().metrics().auroc(), m.refined().metrics().fprAt95Tpr(), m.refined().metrics().auprIn(), m.refined().metrics().auprOut(),
          m.softmax().metrics().auroc()));
      report.add(String.format(Locale.ROOT, "seed %d euclidean from kept magnitudes: AUROC %.4f FPR95 %.4f AUPR-in %.4f AUPR-out %.4f", seed,
          m.euclidean().metrics().auroc(), m.euclidean().metrics().fprAt95Tpr(), m.euclidean().metrics().auprIn(), m.euclidean().metrics().auprOut()));
      minKept = Math.min(minKept, m.refined().metrics().auroc());
      minEuclidean = Math.min(minEuclidean, m.euclidean().metrics().auroc());
      keptVsSoftmax = Math.min(keptVsSoftmax, m.refined().metrics().auroc() - m.softmax().metrics().auroc());
      double best = 0;
      for (OodEval.Variant v : e.variants()) {
        best = Math.max(best, v.auroc());
        report.add(String.format(Locale.ROOT, "seed %d code k=%d %s layers=%s: AUROC %.4f FPR95 %.4f", seed, v.k(), v.statistic().label,
            OodEval.layerLabel(v.layers()), v.auroc(), v.fprAt95Tpr()));
      }
      for (OodEval.Scored sc : e.scores())
        report.add(String.format(Locale.ROOT, "seed %d %s: AUROC %.4f FPR95 %.4f AUPR-in %.4f AUPR-out %.4f (%d in, %d out)", seed, sc.name(),
            sc.metrics().auroc(), sc.metrics().fprAt95Tpr(), sc.metrics().auprIn(), sc.metrics().auprOut(), in.size(), out.size()));
      minCode = Math.min(minCode, e.code().metrics().auroc());
      minBest = Math.min(minBest, best);
      minFloat = Math.min(minFloat, e.floats().metrics().auroc());
      minSoftmax = Math.min(minSoftmax, e.softmax().metrics().auroc());
      minRefined = Math.min(minRefined, e.refined().metrics().auroc());
      refinedVsSoftmax = Math.min(refinedVsSoftmax, e.refined().metrics().auroc() - e.softmax().metrics().auroc());
    }
    report.forEach(System.out::println);
    System.out.printf(Locale.ROOT, "refined minus softmax AUROC, worst seed: %.4f%n", refinedVsSoftmax);
    assertThat(minCode).as("code score (k=1, all layers) AUROC, worst seed").isGreaterThanOrEqualTo(CODE_AUROC_FLOOR);
    assertThat(minBest).as("best code variant AUROC, worst seed").isGreaterThanOrEqualTo(BEST_CODE_AUROC_FLOOR);
    assertThat(minFloat).as("float k-NN AUROC, worst seed").isGreaterThanOrEqualTo(FLOAT_AUROC_FLOOR);
    assertThat(minSoftmax).as("softmax baseline AUROC, worst seed").isGreaterThanOrEqualTo(SOFTMAX_AUROC_FLOOR);
    assertThat(minRefined).as("refined score AUROC, worst seed").isGreaterThanOrEqualTo(REFINED_AUROC_FLOOR);
    // the target: the best score the tool offers reaches the softmax baseline on the same model (measured +0.037 on the worst seed)
    assertThat(refinedVsSoftmax).as("refined minus softmax AUROC, worst seed").isGreaterThanOrEqualTo(0);
    System.out.printf(Locale.ROOT, "refined (kept magnitudes) minus softmax AUROC, worst seed: %.4f%n", keptVsSoftmax);
    assertThat(minKept).as("refined score from kept magnitudes AUROC, worst seed").isGreaterThanOrEqualTo(KEPT_AUROC_FLOOR);
    assertThat(keptVsSoftmax).as("refined (kept magnitudes) minus softmax AUROC, worst seed").isGreaterThanOrEqualTo(0);
    assertThat(minEuclidean).as("euclidean score from kept magnitudes AUROC, worst seed").isGreaterThanOrEqualTo(KEPT_AUROC_FLOOR);
  }

  /** The bundle with the model (Java reader and compiled C) encodes raw inputs to the index's codes and scores them alike. */
  private void checkEdgeWithModel(IndexReader r, Path s, List<double[]> in, List<double[]> out) throws Exception {
    Path c = s.resolve("c");
    EdgeExport.Result res = EdgeExport.run(r, new EdgeExport.Params(s.resolve("digits.edge"), true, c));
    EdgeBundle b = BundleFormat.read(res.out());
    List<double[]> rows = new ArrayList<>(in);
    rows.addAll(out);
    Path all = npy(s.resolve("all.npy"), rows);
    CodeBlock codes = QuerySource.load(r, Source.inputs(all, null), RowRange.ALL).codes();
    OodScore.Output scored = OodScore.run(r, Source.inputs(all, null), RowRange.ALL, new OodScore.Params(0), Progress.NONE);
    Path exe = CEdge.compile(c);
    List<String> lines = new ArrayList<>();
    for (double[] x : rows) lines.add(CEdge.inputLine(x));
    List<String> cOut = CEdge.run(exe, lines);
    for (int i = 0; i < rows.size(); i++) {
      long[] code = b.encode(rows.get(i));
      assertThat(code).as("row " + i).containsExactly(codes.code(i));
      assertThat(b.score(code).value()).isEqualTo(scored.results().get(i).score());
      assertThat(b.isOut(code)).isEqualTo(scored.results().get(i).out());
      assertThat(1 - b.maxSoftmax(rows.get(i))).isEqualTo(1 - scored.results().get(i).maxSoftmax());
      String[] f = cOut.get(i).split(" ");
      assertThat(Double.parseDouble(f[1])).as("C score, row " + i).isEqualTo(scored.results().get(i).score());
      assertThat(f[2]).isEqualTo(scored.results().get(i).out() ? "1" : "0");
      for (int w = 0; w < code.length; w++) assertThat(Long.parseUnsignedLong(f[4 + w], 16)).as("C code, row " + i).isEqualTo(code[w]);
      assertThat(CEdge.range(cOut.get(i))).as("C range ratio, row " + i).isEqualTo(b.encodeWithRange(rows.get(i)).range());
    }
    System.out.printf(Locale.ROOT, "digits bundle with model: %d bytes, %d unique codes of %d examples, %.2f bytes per example%n", res.bytes(),
        res.uniqueCodes(), res.examples(), res.bytesPerExample());
  }

  /**
   * The bundle's range guard on this seed: no training input above 1 (the bound covers the kept
   * magnitudes' rounding); the share above 1 of the held-out inputs (false alarms), of digits 5-9
   * and of held-out inputs multiplied by 2, 5 and 100, with the ratio's AUROC against the held-out
   * inputs. Values in docs/commands/ood.md (far inputs).
   */
  private static void rangeGuard(IndexReader r, long seed, List<double[]> train, List<double[]> in, List<double[]> out, List<String> report) {
    EdgeBundle b = EdgeExport.bundle(r, OodCalibration.load(r), true);
    assertThat(b.hasRangeGuard()).isTrue();
    for (int i = 0; i < train.size(); i++) assertThat(b.encodeWithRange(train.get(i)).range()).as("seed " + seed + " training " + i).isLessThanOrEqualTo(1);
    double[] held = ranges(b, in);
    double falseAlarms = beyond(held);
    StringBuilder line = new StringBuilder(String.format(Locale.ROOT, "seed %d range guard: held-out in %.4f above 1 (%d inputs)", seed, falseAlarms,
        held.length));
    List<List<double[]>> batches = List.of(out, scaled(in, 2), scaled(in, 5), scaled(in, 100));
    List<String> names = List.of("digits 5-9", "in x 2", "in x 5", "in x 100");
    double[] caught = new double[batches.size()];
    for (int k = 0; k < batches.size(); k++) {
      double[] o = ranges(b, batches.get(k));
      caught[k] = beyond(o);
      line.append(String.format(Locale.ROOT, "; %s %.4f above 1, AUROC %.4f", names.get(k), caught[k], RocMetrics.auroc(held, o)));
    }
    report.add(line.toString());
    // measured 2026-12-05 (seeds 11 / 22 / 33): held-out 0.0000 / 0.0056 / 0.0000; x 5 and x 100 1.0000 on every seed
    assertThat(falseAlarms).as("seed " + seed + ": held-out inputs above 1").isLessThanOrEqualTo(0.05);
    assertThat(caught[3]).as("seed " + seed + ": inputs x 100 above 1").isEqualTo(1.0);
  }

  private static double[] ranges(EdgeBundle b, List<double[]> rows) {
    return rows.stream().mapToDouble(x -> b.encodeWithRange(x).range()).toArray();
  }

  private static double beyond(double[] ratios) {
    return Arrays.stream(ratios).filter(v -> v > 1).count() / (double) ratios.length;
  }

  private static List<double[]> scaled(List<double[]> rows, double t) {
    return rows.stream().map(x -> Arrays.stream(x).map(v -> v * t).toArray()).toList();
  }

  static int[] shuffled(int n, long seed) {
    int[] o = new int[n];
    for (int i = 0; i < n; i++) o[i] = i;
    SplittableRandom rnd = new SplittableRandom(seed);
    for (int i = n - 1; i > 0; i--) {
      int j = rnd.nextInt(i + 1), t = o[i];
      o[i] = o[j];
      o[j] = t;
    }
    return o;
  }
}
