package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.edge.BundleFormat;
import io.actindex.edge.EdgeBundle;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.mlp.DigitsData;
import io.actindex.encode.mlp.Mlp;
import io.actindex.encode.mlp.MlpTrainer;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import io.actindex.index.store.Magnitudes;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.SplittableRandom;
import org.ejml.data.DMatrixRMaj;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The range guard of an edge bundle exported from a model-built index (UCI digits 0-4, Alpaydin
 * &amp; Kaynak 1998, the copy vendored in encode's test resources; a (32, 16) network from the
 * project's trainer): the bound of each code layer lies at or above the largest norm of that
 * layer's activations over the training inputs (the model's forward pass here, EJML, in double), so
 * no training input's range ratio exceeds 1, also at 2 bits per kept value, where the rounding is
 * coarse, and over two segments of their own quantisation (a build and an add); and the bound is not
 * much above that largest norm. The ratio equals, in Java, the largest layer norm over its bound
 * computed here, and the gcc-compiled C source gives the same double.
 */
class RangeGuardTest {
  @TempDir Path tmp;

  @Test
  void noTrainingInputGoesBeyondTheBoundsAndCAgrees() throws Exception {
    DigitsData d = DigitsData.load();
    List<double[]> train = new ArrayList<>(), held = new ArrayList<>();
    List<Integer> y = new ArrayList<>();
    int[] order = DigitsOodTest.shuffled(d.x().length, 5);
    for (int i : order) {
      if (d.y()[i] >= 5) continue;
      if (train.size() < 400) {
        train.add(d.x()[i]);
        y.add(d.y()[i]);
      } else if (held.size() < 150) held.add(d.x()[i]);
    }
    Mlp mlp = MlpTrainer.train(train.toArray(new double[0][]), y.stream().mapToInt(Integer::intValue).toArray(), 5,
        new MlpTrainer.Config(new int[] {32, 16}, 15, 32, 1e-3, 5));
    Path model = tmp.resolve("mlp.safetensors");
    mlp.save(model, null);
    double[] most = layerNorms(mlp, train, null);
    for (int bits : new int[] {8, 2}) {
      Path dir = tmp.resolve("idx" + bits);
      // a build of the first 300 rows and an add of the other 100: two segments, each quantised over its own rows
      IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.inputs(DigitsOodTest.npy(tmp.resolve("a.npy"), train.subList(0, 300)), model), null,
          EncodeOptions.positive(), null, 0, bits), Progress.NONE);
      IndexBuilder.add(new IndexBuilder.AddParams(dir, Source.inputs(DigitsOodTest.npy(tmp.resolve("b.npy"), train.subList(300, 400)), null), null, 0),
          Progress.NONE);
      OodCalibrate.run(dir, Source.inputs(DigitsOodTest.npy(tmp.resolve("cal.npy"), held.subList(0, 50)), null), RowRange.ALL,
          new OodCalibrate.Params(1, Statistic.KTH, 0.9, null, false, OodScorer.Kind.CODE, 0), Progress.NONE);
      Path c = tmp.resolve("c" + bits);
      EdgeExport.Result res;
      try (IndexReader r = IndexReader.open(dir)) {
        res = EdgeExport.run(r, new EdgeExport.Params(tmp.resolve("b" + bits + ".edge"), true, c));
      }
      EdgeBundle b = BundleFormat.read(res.out());
      assertThat(b.hasRangeGuard()).isTrue();
      assertThat(res.notes()).isEmpty();
      double[] bounds = b.model().rangeBounds();
      assertThat(res.rangeBounds()).containsExactly(bounds);
      assertThat(bounds).hasSize(2);
      // the bound covers the largest training norm of its own layer, and no more than the rounding explains
      double slack = bits == 8 ? 1.05 : 1.8;
      for (int l = 0; l < 2; l++) {
        System.out.printf(Locale.ROOT, "%d bits, layer %d: bound %.6f, largest training norm %.6f (ratio %.4f)%n", bits, l, bounds[l], most[l],
            bounds[l] / most[l]);
        assertThat(bounds[l]).as(bits + " bits, layer " + l).isGreaterThanOrEqualTo(most[l]).isLessThanOrEqualTo(most[l] * slack);
      }
      double top = 0;
      for (int i = 0; i < train.size(); i++) {
        double ratio = b.encodeWithRange(train.get(i)).range();
        assertThat(ratio).as(bits + " bits, training input " + i).isLessThanOrEqualTo(1);
        top = Math.max(top, ratio);
      }
      assertThat(top).as("the largest training ratio: the guard is not loose").isGreaterThan(1 / slack);
      // Java against the norms computed here, and C against Java, on training, held-out and scaled inputs
      List<double[]> rows = new ArrayList<>(train.subList(0, 100));
      rows.addAll(held);
      for (double[] x : held.subList(0, 50)) rows.add(Arrays.stream(x).map(v -> v * 5).toArray());
      double[] want = new double[rows.size()];
      layerNorms(mlp, rows, (i, norms) -> want[i] = Math.max(norms[0] / bounds[0], norms[1] / bounds[1]));
      List<String> lines = new ArrayList<>();
      for (double[] x : rows) lines.add(CEdge.inputLine(x));
      List<String> out = CEdge.run(CEdge.compile(c), lines);
      int beyond = 0;
      for (int i = 0; i < rows.size(); i++) {
        EdgeBundle.Encoded e = b.encodeWithRange(rows.get(i));
        assertThat(e.range()).as("row " + i).isCloseTo(want[i], within(1e-12 * want[i]));
        assertThat(CEdge.range(out.get(i))).as("C, row " + i).isEqualTo(e.range());
        if (e.range() > 1) beyond++;
      }
      assertThat(beyond).as("the inputs x 5 go beyond").isGreaterThanOrEqualTo(45);
    }
  }

  /**
   * The bounds from kept magnitudes against the floats that were kept, at 2, 4 and 8 bits, over two
   * segments with deleted rows, before and after a compaction: every live row's norm in each layer is
   * at or below the bound, and the bound is the formula over the live rows only. Coarse rounding can
   * read the largest row back smaller than it was; counted here, so that a bound without the
   * quantisation's margin fails (by hand: 2 bits, rows (3, 0), (2.4, 2.4), (0, 3): the middle one,
   * of norm 3.39, reads back as (2, 2), of norm 2.83, below the others' 3).
   */
  @Test
  void boundsCoverEveryLiveRowDespiteTheRounding() throws Exception {
    CodeLayout layout = CodeLayout.parse("a:5,b:7");
    int d = layout.bits(), below = 0;
    for (int rep = 0; rep < 40; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = 30 + rnd.nextInt(30), bits = new int[] {2, 4, 8}[rep % 3];
      float[] acts = new float[n * d];
      for (int i = 0; i < acts.length; i++) acts[i] = rnd.nextInt(3) == 0 ? 0 : (float) (rnd.nextDouble() * rnd.nextDouble() * 10);
      boolean[][] on = new boolean[n][d];
      for (int i = 0; i < n; i++) for (int j = 0; j < d; j++) on[i][j] = acts[i * d + j] > 0;
      CodeBlock codes = CodeBlock.fromBits(layout, on);
      Path dir = tmp.resolve("m" + rep);
      float[][] kept = new float[n][];
      float[][] err = new float[n][d];
      java.util.Set<Integer> deleted = new java.util.HashSet<>();
      for (int i = 0; i < n / 8; i++) deleted.add(rnd.nextInt(n));
      try (IndexWriter w = IndexWriter.create(dir, layout, java.util.Map.of())) {
        for (int p = 0; p < 2; p++) {
          int from = n * p / 2, to = n * (p + 1) / 2;
          Magnitudes m = Magnitudes.quantise(Arrays.copyOfRange(acts, from * d, to * d), to - from, d, bits);
          for (int i = from; i < to; i++) {
            kept[i] = m.row(i - from);
            for (int j = 0; j < d; j++) err[i][j] = m.maxError(j);
          }
          w.add(codes.slice(from, to), m, null);
        }
        w.delete(deleted.stream().mapToInt(Integer::intValue).toArray());
      }
      double[] before = null;
      for (int pass = 0; pass < 2; pass++) {
        if (pass == 1)
          try (IndexWriter w = IndexWriter.open(dir)) {
            w.compact();
          }
        double[] bounds;
        try (IndexReader r = IndexReader.open(dir)) {
          bounds = RangeBounds.of(r);
        }
        if (pass == 0) before = bounds;
        String why = Randoms.describe(seed) + ", " + bits + " bits" + (pass == 1 ? ", compacted" : "");
        int[][] units = {{0, 5}, {5, 12}};
        for (int l = 0; l < 2; l++) {
          double truth = 0, read = 0, formula = 0;
          for (int i = 0; i < n; i++) {
            if (deleted.contains(i)) continue;
            double t = 0, k = 0, f = 0;
            for (int j = units[l][0]; j < units[l][1]; j++) {
              t += (double) acts[i * d + j] * acts[i * d + j];
              k += (double) kept[i][j] * kept[i][j];
              f += (Math.abs((double) kept[i][j]) + err[i][j]) * (Math.abs((double) kept[i][j]) + err[i][j]);
            }
            truth = Math.max(truth, Math.sqrt(t));
            read = Math.max(read, Math.sqrt(k));
            formula = Math.max(formula, Math.sqrt(f));
          }
          assertThat(bounds[l]).as(why + ", layer " + l).isGreaterThanOrEqualTo(truth);
          // a compacted segment tells each unit's largest error over the merged rows' quantisations, so its bound can only grow
          if (pass == 0) assertThat(bounds[l]).as(why + ", layer " + l).isCloseTo(formula * (1 + RangeBounds.SLACK), within(1e-12 * formula));
          else assertThat(bounds[l]).as(why + ", layer " + l).isGreaterThanOrEqualTo(before[l]);
          if (pass == 0 && read * (1 + RangeBounds.SLACK) < truth) below++;
        }
      }
    }
    System.out.println("layers whose largest norm read back from the kept magnitudes (plus the 0.1% slack) is below the true one: " + below + " of 80");
    assertThat(below).as("rounding alone can hide the largest norm: the margin matters").isPositive();
    // the case by hand
    float[] hand = {3, 0, 2.4f, 2.4f, 0, 3};
    Magnitudes m = Magnitudes.quantise(hand, 3, 2, 2);
    assertThat(m.row(1)).containsExactly(2f, 2f);
    Path dir = tmp.resolve("hand");
    CodeLayout two = CodeLayout.single("h", 2);
    try (IndexWriter w = IndexWriter.create(dir, two, java.util.Map.of())) {
      w.add(CodeBlock.fromBits(two, new boolean[][] {{true, false}, {true, true}, {false, true}}), m, null);
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertThat(RangeBounds.of(r)[0]).isGreaterThanOrEqualTo(Math.hypot(2.4f, 2.4f)).isCloseTo(Math.hypot(2.5, 2.5) * (1 + RangeBounds.SLACK),
          within(1e-12));
    }
  }

  /** Without the model, or from an index that keeps no magnitudes, the bundle has no guard and a note says why. */
  @Test
  void noGuardIsToldWhy() throws Exception {
    DigitsData d = DigitsData.load();
    List<double[]> rows = Arrays.asList(d.x()).subList(0, 200);
    int[] labels = Arrays.copyOf(d.y(), 200);
    Mlp mlp = MlpTrainer.train(rows.toArray(new double[0][]), labels, 10, new MlpTrainer.Config(new int[] {16}, 3, 32, 1e-3, 1));
    Path model = tmp.resolve("m.safetensors");
    mlp.save(model, null);
    Path x = DigitsOodTest.npy(tmp.resolve("x.npy"), rows);
    for (int bits : new int[] {8, 0}) {
      Path dir = tmp.resolve("i" + bits);
      IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.inputs(x, model), null, EncodeOptions.positive(), null, 0, bits), Progress.NONE);
      OodCalibrate.run(dir, Source.inputs(x, null), RowRange.ALL, new OodCalibrate.Params(1, Statistic.KTH, 0.9, null, false, OodScorer.Kind.CODE, 0),
          Progress.NONE);
      try (IndexReader r = IndexReader.open(dir)) {
        for (boolean withModel : new boolean[] {true, false}) {
          EdgeExport.Result res = EdgeExport.run(r, new EdgeExport.Params(tmp.resolve(bits + "" + withModel + ".edge"), withModel, null));
          boolean guard = withModel && bits > 0;
          assertThat(BundleFormat.read(res.out()).hasRangeGuard()).isEqualTo(guard);
          assertThat(res.rangeBounds() != null).isEqualTo(guard);
          if (guard) assertThat(res.notes()).isEmpty();
          else assertThat(res.notes()).singleElement().asString().startsWith("note: the bundle has no range guard")
              .contains(withModel ? "keeps no magnitudes" : "export with `withModel`");
        }
      }
    }
    assertThat(Files.exists(tmp.resolve("8true.edge"))).isTrue();
  }

  /**
   * The generated C against Java where the plain sum of squares would overflow or underflow: a code
   * layer of identity weights passes inputs of 1e154 to Double.MAX_VALUE and of 1e-200 to the smallest
   * subnormal through as activations; C's scalbn/ilogb and Java's Math.scalb/getExponent give the
   * same double for each ratio (the value itself is checked against BigDecimal in edge's
   * RangeRatioExtremesTest), and a finite one where only the squares are beyond the double range.
   */
  @Test
  void cGivesJavasRatioForHugeAndTinyActivations() throws Exception {
    int n = 3;
    float[] eye = new float[n * n];
    for (int i = 0; i < n; i++) eye[i * n + i] = 1;
    List<EdgeBundle.Layer> layers = List.of(new EdgeBundle.Layer("h", n, n, eye, new float[n]), new EdgeBundle.Layer("o", 1, n, new float[n], new float[1]));
    double max = Double.MAX_VALUE;
    double[][] rows = {{1e154, 1e154, 0}, {1.5e154, 0, 0}, {1e300, 3e299, 2e299}, {max, 0, 0}, {max, max, max}, {1e-200, 0, 3e-200},
        {Double.MIN_VALUE, 0, 0}, {3, 4, 0}, {-1, -2, -3}, {0.1, 0.2, 0.3}};
    for (double bound : new double[] {1, 1e10, 0.5, 1e-190, Double.MIN_VALUE, 0}) {
      EdgeBundle b = new EdgeBundle(List.of("h"), new int[] {n}, new long[] {0}, new int[] {1},
          new EdgeBundle.Calibration(1, Statistic.KTH, List.of(), 0.9, 1, new double[] {0, 1}),
          new EdgeBundle.Model(layers, new double[n], new double[] {bound}));
      Path c = tmp.resolve("c" + bound);
      EdgeCSource.write(b, c);
      List<String> lines = new ArrayList<>();
      for (double[] x : rows) lines.add(CEdge.inputLine(x));
      List<String> out = CEdge.run(CEdge.compile(c), lines);
      for (int i = 0; i < rows.length; i++) {
        double java = b.encodeWithRange(rows[i]).range();
        assertThat(CEdge.range(out.get(i))).as("bound " + bound + ", row " + Arrays.toString(rows[i])).isEqualTo(java);
        if (bound == 1 && i < 3) assertThat(java).as("row " + i).isFinite().isGreaterThan(1e154);
      }
    }
  }

  interface Norms {
    void accept(int row, double[] norms);
  }

  /** The Euclidean norm of each hidden layer's activations per row (to {@code each}); returns the largest per layer. */
  static double[] layerNorms(Mlp mlp, List<double[]> rows, Norms each) {
    DMatrixRMaj[] out = mlp.forward(new DMatrixRMaj(rows.toArray(new double[0][])));
    int hidden = out.length - 1;
    double[] most = new double[hidden];
    for (int i = 0; i < rows.size(); i++) {
      double[] norms = new double[hidden];
      for (int l = 0; l < hidden; l++) {
        double s = 0;
        for (int o = 0; o < out[l].numCols; o++) s += out[l].get(i, o) * out[l].get(i, o);
        norms[l] = Math.sqrt(s);
        most[l] = Math.max(most[l], norms[l]);
      }
      if (each != null) each.accept(i, norms);
    }
    return most;
  }
}
