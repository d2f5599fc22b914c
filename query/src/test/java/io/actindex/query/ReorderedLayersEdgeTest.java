package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.edge.BundleFormat;
import io.actindex.edge.EdgeBundle;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.encode.BinarizeRule;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.mlp.DigitsData;
import io.actindex.encode.mlp.Mlp;
import io.actindex.encode.mlp.MlpTrainer;
import io.actindex.index.store.IndexReader;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * An index whose code layers are in another order than the model computes them (build {@code
 * layers} second hidden layer, then first) exports a bundle with the model that encodes as the
 * index did: for every training input (UCI digits 0-4, Alpaydin &amp; Kaynak 1998, the copy in
 * encode's test resources; a (70, 33) network from the project's trainer, so the first layer's bits
 * cross a word boundary in either order) the bundle's code is the index's stored code of that row,
 * the gcc-compiled C source gives the same code and the same range ratio, and the bundle of the
 * model's own order gives the same bits with the two layers' blocks swapped. The export refused such
 * an index before (the device set the bits layer by layer in the model's order).
 */
class ReorderedLayersEdgeTest {
  @TempDir Path tmp;

  @Test
  void aBundleFollowsTheIndexsLayerOrder() throws Exception {
    DigitsData d = DigitsData.load();
    List<double[]> train = new ArrayList<>(), cal = new ArrayList<>();
    List<Integer> y = new ArrayList<>();
    for (int i = 0; i < d.x().length && cal.size() < 40; i++) {
      if (d.y()[i] >= 5) continue;
      if (train.size() < 250) {
        train.add(d.x()[i]);
        y.add(d.y()[i]);
      } else cal.add(d.x()[i]);
    }
    Mlp mlp = MlpTrainer.train(train.toArray(new double[0][]), y.stream().mapToInt(Integer::intValue).toArray(), 5,
        new MlpTrainer.Config(new int[] {70, 33}, 5, 32, 1e-3, 7));
    Path model = tmp.resolve("mlp.safetensors");
    mlp.save(model, null);
    List<String> hidden = mlp.hiddenNames();
    List<String> reversed = List.of(hidden.get(1), hidden.get(0));
    Path trainFile = DigitsOodTest.npy(tmp.resolve("train.npy"), train), calFile = DigitsOodTest.npy(tmp.resolve("cal.npy"), cal);
    List<long[]> byOrder = new ArrayList<>();
    for (List<String> layers : List.of(reversed, hidden)) {
      Path dir = tmp.resolve("idx" + byOrder.size()), c = tmp.resolve("c" + byOrder.size());
      IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.inputs(trainFile, model), null,
          new EncodeOptions(BinarizeRule.POSITIVE, 0, layers), null, 0, 8), Progress.NONE);
      OodCalibrate.run(dir, Source.inputs(calFile, null), RowRange.ALL, new OodCalibrate.Params(1, Statistic.KTH, 0.9, null, false, OodScorer.Kind.CODE, 0),
          Progress.NONE);
      EdgeBundle b;
      long[] stored = new long[train.size() * 2];
      try (IndexReader r = IndexReader.open(dir)) {
        assertThat(r.layout().segments().stream().map(s -> s.name()).toList()).isEqualTo(layers);
        b = BundleFormat.read(EdgeExport.run(r, new EdgeExport.Params(tmp.resolve("b" + byOrder.size() + ".edge"), true, c)).out());
        assertThat(b.words()).isEqualTo(2); // 103 bits
        for (int i = 0; i < train.size(); i++) System.arraycopy(r.code(i), 0, stored, 2 * i, 2);
      }
      List<String> lines = new ArrayList<>();
      for (double[] x : train) lines.add(CEdge.inputLine(x));
      List<String> out = CEdge.run(CEdge.compile(c), lines);
      long[] codes = new long[stored.length];
      for (int i = 0; i < train.size(); i++) {
        EdgeBundle.Encoded e = b.encodeWithRange(train.get(i));
        assertThat(e.code()).as("layers " + layers + ", training row " + i + ": the bundle's code is the index's").containsExactly(stored[2 * i], stored[2 * i + 1]);
        String[] parts = out.get(i).split(" ");
        assertThat(new long[] {Long.parseUnsignedLong(parts[4], 16), Long.parseUnsignedLong(parts[5], 16)}).as("C, row " + i).containsExactly(e.code());
        assertThat(CEdge.range(out.get(i))).as("C range, row " + i).isEqualTo(e.range());
        System.arraycopy(e.code(), 0, codes, 2 * i, 2);
      }
      byOrder.add(codes);
    }
    // the same bits in the model's order: layer 2's 33 bits then layer 1's 70, against layer 1's 70 then layer 2's 33
    for (int i = 0; i < train.size(); i++) {
      boolean[] rev = bits(byOrder.get(0), i, 103), fwd = bits(byOrder.get(1), i, 103);
      boolean[] swapped = new boolean[103];
      System.arraycopy(rev, 33, swapped, 0, 70);
      System.arraycopy(rev, 0, swapped, 70, 33);
      assertThat(swapped).as("row " + i).isEqualTo(fwd);
    }
    assertThat(Arrays.stream(byOrder.get(1)).filter(w -> w != 0).count()).as("codes are not all zero").isPositive();
  }

  private static boolean[] bits(long[] codes, int row, int n) {
    boolean[] b = new boolean[n];
    for (int j = 0; j < n; j++) b[j] = (codes[2 * row + (j >>> 6)] >>> (j & 63) & 1) != 0;
    return b;
  }
}
