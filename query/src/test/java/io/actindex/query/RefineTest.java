package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.meta.Where;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import io.actindex.index.store.Magnitudes;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * {@link Refine} against a brute force written here: every live code's Hamming distance counted bit
 * by bit, the candidates = every row within the C-th smallest distance (so ties at the C-th are
 * in), each candidate's vector dequantised from the {@link Magnitudes} the test itself quantised
 * (not through the index), sorted by the metric computed here, then Hamming distance, then id.
 * Random and ReLU-like data, several segments (each quantised on its own), deletes, filters,
 * layers, many seeds; with C = n the refined order is the full metric order.
 */
class RefineTest {
  @TempDir Path tmp;

  /** An index of {@code codes} in 3 segments with kept magnitudes, some rows deleted; returns the expected vectors. */
  private static float[][] build(Path dir, CodeBlock codes, float[] acts, int bits, RoaringBitmap deleted,
      List<Map<String, String>> meta) {
    int n = codes.size(), d = codes.layout().bits();
    float[][] dequantised = new float[n][];
    try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
      for (int p = 0; p < 3; p++) {
        int from = n * p / 3, to = n * (p + 1) / 3;
        Magnitudes m = Magnitudes.quantise(java.util.Arrays.copyOfRange(acts, from * d, to * d), to - from, d, bits);
        for (int i = from; i < to; i++) dequantised[i] = m.row(i - from);
        w.add(codes.slice(from, to), m, meta == null ? null : meta.subList(from, to));
      }
      w.delete(deleted.toArray());
    }
    return dequantised;
  }

  private record Expected(int id, int hamming, double distance) {}

  private static List<Expected> bruteForce(CodeBlock codes, float[][] vectors, RoaringBitmap deleted, RoaringBitmap filter,
      long[] q, float[] query, int[] units, int k, int c, Refine.Metric metric) {
    int n = codes.size();
    List<Expected> all = new ArrayList<>();
    for (int id = 0; id < n; id++) {
      if (deleted.contains(id) || (filter != null && !filter.contains(id))) continue;
      long[] code = codes.code(id);
      int ham = 0;
      for (int u : units) ham += (int) ((q[u >>> 6] >>> (u & 63) ^ code[u >>> 6] >>> (u & 63)) & 1);
      all.add(new Expected(id, ham, metric(metric, query, vectors[id], units)));
    }
    all.sort(Comparator.comparingInt(Expected::hamming).thenComparingInt(Expected::id));
    if (all.size() > c) {
      int dc = all.get(c - 1).hamming();
      all.removeIf(e -> e.hamming() > dc);
    }
    all.sort(Comparator.comparingDouble(Expected::distance).thenComparingInt(Expected::hamming).thenComparingInt(Expected::id));
    return all.subList(0, Math.min(k, all.size()));
  }

  private static double metric(Refine.Metric m, float[] a, float[] b, int[] units) {
    double dot = 0, na = 0, nb = 0, sq = 0;
    for (int u : units) {
      dot += (double) a[u] * b[u];
      na += (double) a[u] * a[u];
      nb += (double) b[u] * b[u];
      sq += ((double) a[u] - b[u]) * ((double) a[u] - b[u]);
    }
    if (m == Refine.Metric.EUCLIDEAN) return Math.sqrt(sq);
    return na == 0 || nb == 0 ? 1 : 1 - dot / Math.sqrt(na * nb);
  }

  private static int[] allUnits(int d) {
    return java.util.stream.IntStream.range(0, d).toArray();
  }

  @Test
  @org.junit.jupiter.api.Tag("slow")
  void equalsBruteForceOnReluLikeData() {
    for (int t = 0; t < 12; t++) {
      long seed = Randoms.seed(t);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      SyntheticCodes.ReluNet net = new SyntheticCodes.ReluNet(8, 24 + rnd.nextInt(50), 8 + rnd.nextInt(30), 5, seed);
      SyntheticCodes.Sample data = net.sample(300 + rnd.nextInt(200), 0, seed + 1);
      SyntheticCodes.Sample queries = net.sample(15, t % 3 == 0 ? 2 : 0, seed + 2);
      check(tmp.resolve("relu" + t), data.codes(), data.activations(), queries.codes(), queries.activations(), rnd, why);
    }
  }

  @Test
  @org.junit.jupiter.api.Tag("slow")
  void equalsBruteForceOnRandomData() {
    for (int t = 0; t < 12; t++) {
      long seed = Randoms.seed(100 + t);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      int d = 1 + rnd.nextInt(130), n = 200 + rnd.nextInt(200), nq = 12;
      CodeLayout layout = d > 3 ? CodeLayout.parse("a:" + (d / 3) + ",b:" + (d - d / 3)) : CodeLayout.single("a", d);
      float[] acts = new float[n * d], qa = new float[nq * d];
      for (int i = 0; i < acts.length; i++) acts[i] = (float) rnd.nextGaussian();
      for (int i = 0; i < qa.length; i++) qa[i] = (float) rnd.nextGaussian();
      check(tmp.resolve("rand" + t), binarize(layout, acts, n), acts, binarize(layout, qa, nq), qa, rnd, why);
    }
  }

  private static CodeBlock binarize(CodeLayout layout, float[] v, int n) {
    int d = layout.bits();
    boolean[][] rows = new boolean[n][d];
    for (int i = 0; i < n; i++) for (int j = 0; j < d; j++) rows[i][j] = v[i * d + j] > 0;
    return CodeBlock.fromBits(layout, rows);
  }

  private void check(Path dir, CodeBlock codes, float[] acts, CodeBlock qCodes, float[] qActs, SplittableRandom rnd, String why) {
    int n = codes.size(), d = codes.layout().bits();
    int bits = new int[] {2, 4, 8}[rnd.nextInt(3)];
    RoaringBitmap deleted = new RoaringBitmap();
    for (int i = 0; i < n / 10; i++) deleted.add(rnd.nextInt(n));
    List<Map<String, String>> meta = TestIndexes.rows(0, n, rnd);
    float[][] vectors = build(dir, codes, acts, bits, deleted, meta);
    try (IndexReader r = IndexReader.open(dir)) {
      QuerySource.Queries q = new QuerySource.Queries(new QueryCodes(qCodes, 0), qActs);
      for (int round = 0; round < 4; round++) {
        int k = 1 + rnd.nextInt(12), c = k + rnd.nextInt(round == 3 ? 3 : 60);
        Refine.Metric metric = rnd.nextBoolean() ? Refine.Metric.COSINE : Refine.Metric.EUCLIDEAN;
        String where = round == 1 ? "label = cat or split = test" : null;
        List<String> layers = round == 2 && codes.layout().segments().size() > 1 ? List.of(codes.layout().segments().get(1).name()) : null;
        RoaringBitmap filter = where == null ? null : RoaringBitmap.bitmapOf(Where.select(r.meta(), where).toArray());
        int[] units = layers == null ? allUnits(d) : Refine.units(codes.layout(), Layers.select(codes.layout(), layers));
        List<Refine.Result> got = Refine.run(r, q, new Refine.Params(k, c, metric, where, layers, 1 + round % 2), null);
        for (int i = 0; i < qCodes.size(); i++) {
          float[] query = java.util.Arrays.copyOfRange(qActs, i * d, i * d + d);
          List<Expected> want = bruteForce(codes, vectors, deleted, filter, qCodes.code(i), query, units, k, c, metric);
          String at = why + " bits " + bits + " round " + round + " k " + k + " C " + c + " " + metric + " query " + i;
          List<Refine.Neighbor> nbs = got.get(i).neighbors();
          assertThat(nbs.stream().map(nb -> nb.example().id()).toList()).as(at).isEqualTo(want.stream().map(Expected::id).toList());
          for (int h = 0; h < want.size(); h++) {
            assertThat(nbs.get(h).example().distance()).as(at + " hamming " + h).isEqualTo(want.get(h).hamming());
            assertThat(nbs.get(h).distance()).as(at + " metric " + h).isCloseTo(want.get(h).distance(), org.assertj.core.api.Assertions.within(1e-9));
          }
        }
      }
    }
  }

  @Test
  void withAllRowsAsCandidatesTheOrderIsTheFullMetricOrder() {
    for (int t = 0; t < 6; t++) {
      long seed = Randoms.seed(200 + t);
      SyntheticCodes.ReluNet net = new SyntheticCodes.ReluNet(8, 40, 24, 5, seed);
      SyntheticCodes.Sample data = net.sample(250, 0, seed + 1), queries = net.sample(10, 0, seed + 2);
      RoaringBitmap deleted = RoaringBitmap.bitmapOf(3, 77, 130);
      float[][] vectors = build(tmp.resolve("all" + t), data.codes(), data.activations(), 8, deleted, null);
      int d = data.dims(), live = 250 - 3;
      try (IndexReader r = IndexReader.open(tmp.resolve("all" + t))) {
        for (Refine.Metric metric : Refine.Metric.values()) {
          List<Refine.Result> got = Refine.run(r, new QuerySource.Queries(new QueryCodes(queries.codes(), 0), queries.activations()),
              new Refine.Params(live, live, metric, null, null, 1), null);
          for (int i = 0; i < 10; i++) {
            float[] query = java.util.Arrays.copyOfRange(queries.activations(), i * d, i * d + d);
            // the full order on the dequantised vectors: every live row sorted by the metric alone (then id)
            List<Integer> ids = new ArrayList<>();
            for (int id = 0; id < 250; id++) if (!deleted.contains(id)) ids.add(id);
            int[] units = allUnits(d);
            List<Integer> full = ids.stream().sorted(Comparator.<Integer>comparingDouble(id -> metric(metric, query, vectors[id], units))
                .thenComparingInt(id -> id)).toList();
            List<Refine.Neighbor> nbs = got.get(i).neighbors();
            assertThat(got.get(i).candidates()).isEqualTo(live);
            // equal metric values may differ in Hamming order; compare the metric sequence and the set
            double[] gotD = nbs.stream().mapToDouble(Refine.Neighbor::distance).toArray();
            double[] wantD = full.stream().mapToDouble(id -> metric(metric, query, vectors[id], units)).toArray();
            for (int h = 0; h < live; h++)
              assertThat(gotD[h]).as(Randoms.describe(seed) + " " + metric + " query " + i + " rank " + h)
                  .isCloseTo(wantD[h], org.assertj.core.api.Assertions.within(1e-9));
            assertThat(nbs.stream().map(nb -> nb.example().id()).sorted().toList()).isEqualTo(ids);
            long distinct = java.util.Arrays.stream(wantD).distinct().count();
            if (distinct == live) assertThat(nbs.stream().map(nb -> nb.example().id()).toList()).isEqualTo(full);
          }
        }
      }
    }
  }

  @Test
  void refusesAnIndexWithoutMagnitudesAndBadCounts() {
    CodeBlock codes = SyntheticCodes.uniform(20, 64, 1);
    Path dir = tmp.resolve("codes");
    TestIndexes.write(dir, codes, null, 1);
    try (IndexReader r = IndexReader.open(dir)) {
      QuerySource.Queries q = new QuerySource.Queries(new QueryCodes(codes.slice(0, 1), 0), new float[64]);
      // no build.magnitudes.bits at all: written before kept magnitudes existed
      assertThatThrownBy(() -> Refine.run(r, q, new Refine.Params(1, 10, Refine.Metric.COSINE, null, null, 1), null))
          .isInstanceOf(BadInputException.class).hasMessageContaining("keeps no magnitudes").hasMessageContaining("earlier actindex");
    }
    Path off = tmp.resolve("off");
    try (IndexWriter w = IndexWriter.create(off, codes.layout(), Map.of(IndexBuilder.MAGNITUDES, "0"))) {
      w.add(codes, null);
    }
    try (IndexReader r = IndexReader.open(off)) {
      QuerySource.Queries q = new QuerySource.Queries(new QueryCodes(codes.slice(0, 1), 0), new float[64]);
      assertThatThrownBy(() -> Refine.run(r, q, new Refine.Params(1, 10, Refine.Metric.COSINE, null, null, 1), null))
          .isInstanceOf(BadInputException.class).hasMessageContaining("keeps no magnitudes").hasMessageContaining("`magnitudeBits 0`");
    }
    assertThatThrownBy(() -> new Refine.Params(0, 10, null, null, null, 1)).isInstanceOf(BadInputException.class);
    assertThatThrownBy(() -> new Refine.Params(1, 0, null, null, null, 1)).isInstanceOf(BadInputException.class);
    assertThatThrownBy(() -> new Refine.Params(5, 4, null, null, null, 1)).isInstanceOf(BadInputException.class);
    assertThatThrownBy(() -> Refine.Metric.parse("manhattan")).isInstanceOf(BadInputException.class);
  }

  @Test
  void zeroVectorsHaveCosineDistanceOne() {
    float[] z = new float[4], a = {1, 2, 0, 0};
    assertThat(Refine.distance(Refine.Metric.COSINE, z, a, null)).isEqualTo(1.0);
    assertThat(Refine.distance(Refine.Metric.COSINE, a, a, null)).isCloseTo(0.0, org.assertj.core.api.Assertions.within(1e-15));
    // 3-4-5 triangle: Euclidean distance 5
    assertThat(Refine.distance(Refine.Metric.EUCLIDEAN, new float[] {3, 0}, new float[] {0, 4}, null)).isEqualTo(5.0);
  }
}
