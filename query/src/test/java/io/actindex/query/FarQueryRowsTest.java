package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.core.Randoms;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import io.actindex.encode.mlp.Mlp;
import io.actindex.encode.mlp.MlpTrainer;
import io.actindex.index.store.IndexReader;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A query batch with one row whose activations do not fit float32 (float64 activations of 1e39, or
 * inputs scaled so that the model's hidden activations pass 3.4e38): the row is answered, not the
 * batch refused. Its code is exact (bit by bit from the doubles, Hamming neighbours by a brute force
 * written here); its float distances are +Infinity, so the OOD scores flag it out with the smallest
 * p-value and a refined search keeps its candidates in Hamming order; every other row's answer is
 * the one the batch without it gets. A calibration file with such a row is refused, the index unchanged.
 */
class FarQueryRowsTest {
  @TempDir Path tmp;

  private static final int UNITS = 24;

  @Test
  void aFarActivationsRowIsAnsweredAndTheOtherRowsAsWithoutIt() throws Exception {
    for (int t = 0; t < 4; t++) {
      long seed = Randoms.seed(t);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      Path s = Files.createDirectories(tmp.resolve("a" + t));
      Path dir = s.resolve("idx");
      IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(f64(s.resolve("train.npy"), relu(rnd, 300))), null,
          EncodeOptions.positive(), null, 0), Progress.NONE);
      Path cal = f64(s.resolve("cal.npy"), relu(rnd, 60));
      List<double[]> plain = relu(rnd, 20);
      int at = rnd.nextInt(plain.size() + 1);
      double[] far = relu(rnd, 1).get(0);
      int u = rnd.nextInt(UNITS);
      far[u] = 1e39; // cast to float: +Infinity (IEEE 754 overflow under round to nearest)
      far[(u + 1) % UNITS] = -5e38; // -Infinity; its code bit is off
      List<double[]> withFar = new ArrayList<>(plain);
      withFar.add(at, far);
      Path without = f64(s.resolve("q.npy"), plain), with = f64(s.resolve("q-far.npy"), withFar);
      for (OodScorer.Kind kind : List.of(OodScorer.Kind.EUCLIDEAN, OodScorer.Kind.REFINED)) {
        OodCalibrate.run(dir, Source.activations(cal), RowRange.ALL, new OodCalibrate.Params(2, Statistic.KTH, 0.95, null, false, kind, 30),
            Progress.NONE);
        try (IndexReader r = IndexReader.open(dir)) {
          checkBatch(r, Source.activations(without), Source.activations(with), at, far, why + ", " + kind.label());
        }
      }
      // a calibration file holding such a row is refused: the calibration is the index's, its scores must be finite
      Path badCal = f64(s.resolve("cal-far.npy"), withFar);
      java.util.Map<String, String> before = OodIndexTest.checksums(dir);
      assertThatThrownBy(() -> OodCalibrate.run(dir, Source.activations(badCal), RowRange.ALL,
          new OodCalibrate.Params(2, Statistic.KTH, 0.95, null, false, OodScorer.Kind.EUCLIDEAN, 30), Progress.NONE))
          .as(why).isInstanceOf(BadInputException.class).hasMessageStartingWith(badCal + ": row " + at + " (0-based)")
          .hasMessageContaining("float32");
      assertThat(OodIndexTest.checksums(dir)).as(why + ": index unchanged").isEqualTo(before);
    }
  }

  @Test
  void aRowScaledFarThroughTheModelIsAnsweredAndNamedAsInputs() throws Exception {
    long seed = Randoms.seed(7);
    String why = Randoms.describe(seed);
    SplittableRandom rnd = new SplittableRandom(seed);
    int dim = 6;
    List<double[]> train = twoClasses(rnd, 240, dim);
    int[] y = new int[240];
    for (int i = 0; i < 240; i++) y[i] = i % 2;
    Mlp mlp = MlpTrainer.train(train.toArray(new double[0][]), y, 2, new MlpTrainer.Config(new int[] {16, 8}, 10, 32, 1e-2, seed));
    Path model = tmp.resolve("m.safetensors");
    mlp.save(model, null);
    Path dir = tmp.resolve("midx");
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.inputs(f64(tmp.resolve("train.npy"), train), model), null,
        EncodeOptions.positive(), null, 0), Progress.NONE);
    List<double[]> plain = new ArrayList<>(train.subList(0, 12));
    double[] far = train.get(100).clone();
    for (int j = 0; j < dim; j++) far[j] *= 1e39; // fits float64, not float32; the hidden units follow
    List<double[]> withFar = new ArrayList<>(plain);
    withFar.add(5, far);
    Path cal = f64(tmp.resolve("cal.npy"), twoClasses(rnd, 80, dim));
    Path without = f64(tmp.resolve("in.npy"), plain), with = f64(tmp.resolve("in-far.npy"), withFar);
    OodCalibrate.run(dir, Source.inputs(cal, null), RowRange.ALL, new OodCalibrate.Params(1, Statistic.KTH, 0.95, null, false), Progress.NONE);
    try (IndexReader r = IndexReader.open(dir)) {
      assertThat(OodCalibration.scoring(r).kind()).as("the default calibration").isEqualTo(OodScorer.Kind.EUCLIDEAN);
      checkBatch(r, Source.inputs(without, null), Source.inputs(with, null), 5, null, why);
      QuerySource.Queries q = QuerySource.loadWithActivations(r, Source.inputs(with, null), RowRange.ALL, Progress.NONE);
      assertThat(q.codes().notes()).as(why).anySatisfy(n -> assertThat(n).startsWith(with + ": note: row 5 (0-based) has activations through the model"));
    }
  }

  /**
   * {@code with} is {@code without} with {@code far} inserted at row {@code at} ({@code far} null:
   * not known here, the row's code is then checked by the brute force only).
   */
  private static void checkBatch(IndexReader r, Source without, Source with, int at, double[] far, String why) {
    QuerySource.Queries q = QuerySource.loadWithActivations(r, with, RowRange.ALL, Progress.NONE);
    assertThat(q.farRows()).as(why + ": the far row, found").containsExactly(at);
    assertThat(QuerySource.loadWithActivations(r, without, RowRange.ALL, Progress.NONE).farRows()).as(why).isEmpty();
    assertThat(q.codes().notes()).as(why).filteredOn(n -> n.contains("float32")).singleElement().asString()
        .startsWith(with.file() + ": note: row " + at + " (0-based) has activations").contains("infinite");
    long[] code = q.codes().codes().code(at);
    if (far != null)
      for (int b = 0; b < UNITS; b++)
        assertThat((code[b >>> 6] >>> (b & 63)) & 1).as(why + ": bit " + b + " of the far row's code").isEqualTo(far[b] > 0 ? 1L : 0L);
    int[] brute = bruteOrder(r, code);

    // ood score: the others as without the far row; the far row out, at the smallest p-value, its Hamming distances exact
    OodScore.Output a = OodScore.run(r, without, RowRange.ALL, new OodScore.Params(2), Progress.NONE);
    OodScore.Output b = OodScore.run(r, with, RowRange.ALL, new OodScore.Params(2), Progress.NONE);
    assertThat(b.notes()).as(why).anySatisfy(n -> assertThat(n).contains("row " + at + " (0-based)"));
    for (int i = 0, j = 0; i < b.results().size(); i++) {
      OodScore.Result x = b.results().get(i);
      assertThat(x.row()).isEqualTo(i);
      if (i == at) {
        int k = OodCalibration.load(r).k();
        assertThat(x.score()).as(why + ": the far row's score").isEqualTo(Double.POSITIVE_INFINITY);
        assertThat(x.out()).as(why + ": the far row flagged out").isTrue();
        assertThat(x.pValue()).as(why + ": the smallest p-value, 1 / (n + 1)").isEqualTo(1.0 / (OodCalibration.load(r).scores().length + 1));
        assertThat(x.kth()).as(why + ": k-th Hamming distance, brute force").isEqualTo(hamming(r, code, brute[k - 1]));
        continue;
      }
      OodScore.Result y = a.results().get(j++);
      assertThat(x).as(why + ": row " + i).usingRecursiveComparison().ignoringFields("row").isEqualTo(y);
    }

    // nearest --refine, either metric: the others as without; the far row's candidates in Hamming order, distances infinite
    for (Refine.Metric m : Refine.Metric.values()) {
      Refine.Params p = new Refine.Params(5, 20, m, null, null, 1);
      List<Refine.Result> ra = Refine.run(r, QuerySource.loadWithActivations(r, without, RowRange.ALL, Progress.NONE), p, Progress.NONE);
      List<Refine.Result> rb = Refine.run(r, q, p, Progress.NONE);
      for (int i = 0, j = 0; i < rb.size(); i++) {
        Refine.Result x = rb.get(i);
        if (i == at) {
          for (int h = 0; h < 5; h++) {
            assertThat(x.neighbors().get(h).distance()).as(why + ", " + m + ": refined distance").isEqualTo(Double.POSITIVE_INFINITY);
            assertThat(x.neighbors().get(h).example().id()).as(why + ", " + m + ": neighbour " + h + ", brute-force Hamming order").isEqualTo(brute[h]);
          }
          continue;
        }
        Refine.Result y = ra.get(j++);
        assertThat(x).as(why + ", " + m + ": row " + i).usingRecursiveComparison().ignoringFields("row").isEqualTo(y);
      }
    }

    // ood eval with the far row among the out-of-distribution rows: its scores are the highest, the metrics finite
    OodEval.Result e = OodEval.run(r, new OodEval.Params(without, with, null, null, null), Progress.NONE);
    for (OodEval.Scored sc : List.of(e.refined(), e.euclidean())) {
      assertThat(sc.out()[at]).as(why + ": eval " + sc.name()).isEqualTo(Double.POSITIVE_INFINITY);
      assertThat(sc.metrics().auroc()).as(why + ": eval " + sc.name()).isFinite();
    }
  }

  /** Every live id in (Hamming distance to {@code q}, id) order, counted bit by bit. */
  private static int[] bruteOrder(IndexReader r, long[] q) {
    List<Integer> ids = new ArrayList<>();
    r.forEachLive(ids::add);
    ids.sort(Comparator.<Integer>comparingInt(id -> hamming(r, q, id)).thenComparingInt(id -> id));
    return ids.stream().mapToInt(Integer::intValue).toArray();
  }

  private static int hamming(IndexReader r, long[] q, int id) {
    long[] c = r.code(id);
    int d = 0;
    for (int b = 0; b < r.layout().bits(); b++) d += (int) (((q[b >>> 6] ^ c[b >>> 6]) >>> (b & 63)) & 1);
    return d;
  }

  /** Two Gaussian classes, alternating by row (class 0 on even rows), centres +-(0, 1, 2, 0, 1, 2, ...). */
  private static List<double[]> twoClasses(SplittableRandom rnd, int n, int dim) {
    List<double[]> rows = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      double[] x = new double[dim];
      for (int j = 0; j < dim; j++) x[j] = (i % 2 == 0 ? 1 : -1) * (j % 3) + rnd.nextGaussian();
      rows.add(x);
    }
    return rows;
  }

  /** ReLU-like rows: a third of the units mostly off, the rest Gaussian, clipped at 0. */
  private static List<double[]> relu(SplittableRandom rnd, int n) {
    List<double[]> rows = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      double[] x = new double[UNITS];
      for (int j = 0; j < UNITS; j++) x[j] = Math.max(0, rnd.nextGaussian() + (j % 3 == 0 ? -1 : 0.3));
      rows.add(x);
    }
    return rows;
  }

  static Path f64(Path file, List<double[]> rows) throws IOException {
    try (NpyWriter w = NpyWriter.create(file, NpyDtype.FLOAT64, rows.get(0).length)) {
      for (double[] x : rows) w.write(x, 1);
      w.commit();
    }
    return file;
  }
}
