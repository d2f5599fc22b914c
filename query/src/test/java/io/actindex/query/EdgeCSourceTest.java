package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.edge.EdgeBundle;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.index.store.IndexReader;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The generated C99 source, compiled by the system's gcc (-std=c99 -Wall -Wextra -pedantic -Werror), answers
 * exactly as the index does on random (70-bit, two words, a layer subset) and ReLU-like (72-bit)
 * codes: k-th distance, score, decision and p-value, also for a code whose bits past the width
 * are set (they never count). The model part is checked on the digits set
 * in {@link DigitsOodTest}.
 */
class EdgeCSourceTest {
  @TempDir Path tmp;

  @Test
  void compiledCSourceAgreesWithTheIndex() throws Exception {
    int outs = 0, total = 0;
    for (int rep = 0; rep < 2; rep++) {
      long seed = Randoms.seed(rep);
      OodIndexTest.Data d = rep == 0 ? OodIndexTest.relu(seed, 600) : OodIndexTest.uniform(seed, 400);
      Path dir = OodIndexTest.index(tmp.resolve("idx" + rep), d.train());
      List<String> layers = rep == 1 ? List.of("b") : List.of();
      Statistic st = rep == 0 ? Statistic.KTH : Statistic.MEAN;
      OodCalibrate.run(dir, Source.codes(OodIndexTest.npy(tmp.resolve("cal" + rep + ".npy"), d.cal())), RowRange.ALL,
          new OodCalibrate.Params(5, st, 0.9, layers, false), Progress.NONE);
      Path c = tmp.resolve("c" + rep);
      OodScore.Output o;
      try (IndexReader r = IndexReader.open(dir)) {
        EdgeExport.run(r, new EdgeExport.Params(tmp.resolve("b" + rep + ".edge"), false, c));
        o = OodScore.run(r, Source.codes(OodIndexTest.npy(tmp.resolve("q" + rep + ".npy"), d.queries())), RowRange.ALL, new OodScore.Params(0),
            Progress.NONE);
      }
      Path exe = CEdge.compile(c);
      CodeBlock q = d.queries();
      // each query twice: as it is, and with the bits of its last word past the code width set (a
      // caller's dirty padding), which must not count
      long ghost = -1L << (q.layout().bits() & 63);
      List<String> lines = new ArrayList<>();
      for (int i = 0; i < q.size(); i++) {
        long[] code = q.code(i);
        lines.add(CEdge.codeLine(code));
        code[code.length - 1] |= ghost;
        lines.add(CEdge.codeLine(code));
      }
      List<String> out = CEdge.run(exe, lines);
      assertThat(out).hasSize(2 * q.size());
      total += q.size();
      for (int line = 0; line < out.size(); line++) {
        int i = line / 2;
        String[] f = out.get(line).split(" ");
        OodScore.Result res = o.results().get(i);
        String what = Randoms.describe(seed) + " query " + i + (line % 2 == 1 ? " with the bits past the width set" : "");
        assertThat(Integer.parseInt(f[0])).as(what).isEqualTo(res.kth());
        assertThat(Double.parseDouble(f[1])).as(what).isEqualTo(res.score());
        assertThat(f[2]).as(what).isEqualTo(res.out() ? "1" : "0");
        assertThat(Double.parseDouble(f[3])).as(what).isEqualTo(res.pValue());
        if (res.out() && line % 2 == 0) outs++;
      }
    }
    // both decisions reach the C scorer (over both data sets: uniform codes score in few discrete
    // values, so a calibration threshold can hold every one of its 100 queries)
    assertThat(outs).as("both decisions occur").isBetween(1, total - 1);
  }

  @Test
  void anInputThatOverflowsIsRefusedInJavaAndC() throws Exception {
    // one hidden layer: unit 0 sums both inputs, unit 1 takes their difference; the index refuses a
    // row whose hidden activation is not finite (ModelLayers), so Java and C must refuse it too
    EdgeBundle.Model m = new EdgeBundle.Model(List.of(new EdgeBundle.Layer("h", 2, 2, new float[] {1, 1, 1, -1}, new float[] {0, 0}),
        new EdgeBundle.Layer("o", 1, 2, new float[] {1, 1}, new float[] {0})), new double[] {0, 0});
    EdgeBundle b = new EdgeBundle(List.of("h"), new int[] {2}, new long[] {1, 0}, new int[] {2, 1},
        new EdgeBundle.Calibration(1, Statistic.KTH, List.of(), 0.9, 1, new double[] {0, 1}), m);
    Path c = tmp.resolve("overflow");
    EdgeCSource.write(b, c);
    Path exe = CEdge.compile(c);
    double big = Double.MAX_VALUE * 0.75;
    double[][] rows = {{1, 0.5}, {big, big}, {-big, -big}, {big, -big}, {-big, big}, {Double.MAX_VALUE, -Double.MAX_VALUE}, {Double.NaN, 0}};
    List<String> lines = new ArrayList<>();
    for (double[] x : rows) lines.add(CEdge.inputLine(x));
    List<String> out = CEdge.run(exe, lines);
    assertThat(out).hasSize(rows.length);
    int refused = 0;
    for (int i = 0; i < rows.length; i++) {
      long[] code;
      try {
        code = b.encode(rows[i]);
      } catch (IllegalArgumentException e) {
        assertThat(e.getMessage()).containsAnyOf("overflows", "only finite numbers");
        assertThat(out.get(i)).as("row " + i + " refused in Java").isEqualTo("overflow");
        refused++;
        continue;
      }
      String[] f = out.get(i).split(" ");
      assertThat(f).as("row " + i + " encoded in Java: " + out.get(i)).hasSize(5);
      assertThat(Long.parseUnsignedLong(f[4], 16)).as("row " + i).isEqualTo(code[0]);
    }
    // refused: (big, big) takes unit 0 to +Infinity, (big, -big) and (MAX, -MAX) unit 1, (NaN, 0) both units to NaN;
    // kept: (-big, -big) and (-big, big) reach -Infinity only, which ReLU takes to 0 (as in the index)
    assertThat(refused).isEqualTo(4);
    // the header serves C++ firmware too: the driver built as C++ against the C object answers alike
    assertThat(CEdge.run(CEdge.compileCpp(c), lines)).isEqualTo(out);
  }

  @Test
  void anInputThatIsNotFiniteIsRefusedInJavaAndC() throws Exception {
    // ood score refuses a row holding NaN or an infinity when it reads it; the device's encoders must
    // refuse it too, also where the weights would take it to a finite code: here every weight on
    // input 0 is positive, so -Infinity there makes every hidden unit -Infinity, which ReLU takes to 0
    EdgeBundle.Model m = new EdgeBundle.Model(List.of(new EdgeBundle.Layer("h", 2, 2, new float[] {1, 1, 2, -1}, new float[] {0, 0}),
        new EdgeBundle.Layer("o", 1, 2, new float[] {1, 1}, new float[] {0})), new double[] {0, 0});
    EdgeBundle b = new EdgeBundle(List.of("h"), new int[] {2}, new long[] {1, 0}, new int[] {2, 1},
        new EdgeBundle.Calibration(1, Statistic.KTH, List.of(), 0.9, 1, new double[] {0, 1}), m);
    Path c = tmp.resolve("notfinite");
    EdgeCSource.write(b, c);
    Path exe = CEdge.compile(c);
    double[][] rows = {{Double.NEGATIVE_INFINITY, 0}, {Double.NEGATIVE_INFINITY, 1}, {0, Double.POSITIVE_INFINITY}, {Double.NaN, 0},
        {0, Double.NaN}, {-1e300, 0}};
    List<String> lines = new ArrayList<>();
    for (double[] x : rows) lines.add(CEdge.inputLine(x));
    List<String> out = CEdge.run(exe, lines);
    assertThat(out).hasSize(rows.length);
    for (int i = 0; i < rows.length - 1; i++) {
      double[] x = rows[i];
      assertThat(out.get(i)).as("C, row " + i + " " + java.util.Arrays.toString(x)).isEqualTo("overflow");
      assertThatThrownBy(() -> b.encode(x)).as("Java, row " + i).isInstanceOf(IllegalArgumentException.class).hasMessageContaining("finite");
    }
    // a finite input that the weights take to -Infinity everywhere is read by the index (its activations are 0), so here too
    long[] code = b.encode(rows[rows.length - 1]);
    assertThat(code).containsExactly(0L);
    String[] f = out.get(rows.length - 1).split(" ");
    assertThat(Integer.parseInt(f[0])).isEqualTo(b.score(code).kth());
    assertThat(f[2]).isEqualTo(b.isOut(code) ? "1" : "0");
    assertThat(Long.parseUnsignedLong(f[4], 16)).isZero();
  }

  @Test
  void headerNamesTheSizesAndTheCaution() throws Exception {
    OodIndexTest.Data d = OodIndexTest.uniform(Randoms.seed(3), 100);
    Path dir = OodIndexTest.index(tmp.resolve("idx"), d.train());
    OodCalibrate.run(dir, Source.codes(OodIndexTest.npy(tmp.resolve("cal.npy"), d.cal())), RowRange.ALL,
        new OodCalibrate.Params(1, null, 0.9, null, false), Progress.NONE);
    try (IndexReader r = IndexReader.open(dir)) {
      EdgeBundle b = EdgeExport.bundle(r, OodCalibration.load(r), false);
      String h = EdgeCSource.header(b);
      assertThat(h).contains("#define AXE_BITS 70", "#define AXE_WORDS 2", "#define AXE_K 1", "not a guarantee", "#define AXE_HAS_MODEL 0",
          "#define AXE_HAS_RANGE 0");
      assertThat(EdgeCSource.source(b)).contains("__builtin_popcountll").doesNotContain("malloc");
    }
  }
}
