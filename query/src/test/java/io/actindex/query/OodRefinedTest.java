package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import io.actindex.index.store.Magnitudes;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * The refined OOD scores ({@link OodScorer.Kind#REFINED}, cosine, and {@link OodScorer.Kind#EUCLIDEAN})
 * against a brute force written here: every
 * live code's Hamming distance counted bit by bit on the scored layers, the candidates = every row
 * within the C-th smallest distance (ties at the C-th included), each candidate's vector
 * dequantised from the {@link Magnitudes} the test quantised itself, the cosine or Euclidean distance
 * computed here, sorted; the score is the k-th smallest (or the mean of the k smallest). Random and
 * ReLU-like data (the random data with duplicated rows and a query equal to a training row, so that
 * distances tie exactly), deletes, layers, both statistics, many seeds, before and after a compaction merges the two
 * segments (their rows keep their own quantisation, so the scores stay the same). Then the commands
 * end to end: the stored calibration records the score, and mismatches and codes-only queries are
 * refused.
 */
class OodRefinedTest {
  @TempDir Path tmp;

  private int exactTies; // queries whose k-th and (k+1)-th candidate distances were equal, over the whole test

  @Test
  void equalsBruteForceOnReluLikeAndRandomData() {
    for (int t = 0; t < 16; t++) {
      long seed = Randoms.seed(t);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeBlock codes, qCodes;
      float[] acts, qActs;
      if (t % 2 == 0) {
        SyntheticCodes.ReluNet net = new SyntheticCodes.ReluNet(8, 24 + rnd.nextInt(40), 8 + rnd.nextInt(24), 5, seed);
        SyntheticCodes.Sample data = net.sample(200 + rnd.nextInt(200), 0, seed + 1), q = net.sample(12, t % 4 == 0 ? 2 : 0, seed + 2);
        codes = data.codes();
        acts = data.activations();
        qCodes = q.codes();
        qActs = q.activations();
      } else {
        int d = 2 + rnd.nextInt(100), n = 150 + rnd.nextInt(200);
        CodeLayout layout = d > 3 ? CodeLayout.parse("a:" + (d / 3) + ",b:" + (d - d / 3)) : CodeLayout.single("a", d);
        acts = gaussian(rnd, n * d);
        qActs = gaussian(rnd, 12 * d);
        for (int i = 0; i < n / 3; i++) // duplicated rows: the same code and, in one half, the same quantised vector
          System.arraycopy(acts, (i % (n / 2)) * d, acts, (n / 2 - 1 - i % (n / 2)) * d, d);
        System.arraycopy(acts, rnd.nextInt(n) * d, qActs, 0, d); // a query on a training row
        codes = binarize(layout, acts, n);
        qCodes = binarize(layout, qActs, 12);
      }
      check(tmp.resolve("i" + t), codes, acts, qCodes, qActs, rnd, why);
    }
    assertThat(exactTies).as("queries with an exact tie at the k-th refined distance").isGreaterThan(0);
  }

  private void check(Path dir, CodeBlock codes, float[] acts, CodeBlock qCodes, float[] qActs, SplittableRandom rnd, String why) {
    int n = codes.size(), d = codes.layout().bits();
    int bits = new int[] {2, 4, 8}[rnd.nextInt(3)];
    RoaringBitmap deleted = new RoaringBitmap();
    for (int i = 0; i < n / 10; i++) deleted.add(rnd.nextInt(n));
    float[][] vectors = new float[n][];
    try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
      for (int p = 0; p < 2; p++) {
        int from = n * p / 2, to = n * (p + 1) / 2;
        Magnitudes m = Magnitudes.quantise(Arrays.copyOfRange(acts, from * d, to * d), to - from, d, bits);
        for (int i = from; i < to; i++) vectors[i] = m.row(i - from);
        w.add(codes.slice(from, to), m, null);
      }
      w.delete(deleted.toArray());
    }
    for (int pass = 0; pass < 2; pass++) {
      if (pass == 1)
        try (IndexWriter w = IndexWriter.open(dir)) { // one segment: the two batches' rows keep their own quantisation
          w.compact();
        }
      try (IndexReader r = IndexReader.open(dir)) {
        QueryCodes q = new QueryCodes(qCodes, 0);
        for (int round = 0; round < 4; round++) {
          int k = 1 + rnd.nextInt(8), c = k + rnd.nextInt(round == 3 ? 3 : 50);
          Statistic st = rnd.nextBoolean() ? Statistic.KTH : Statistic.MEAN;
          List<String> layers = round == 2 && codes.layout().segments().size() > 1 ? List.of(codes.layout().segments().get(1).name()) : null;
          int[] units = layers == null ? java.util.stream.IntStream.range(0, d).toArray() : Refine.units(codes.layout(), Layers.select(codes.layout(), layers));
          for (OodScorer.Kind kind : List.of(OodScorer.Kind.REFINED, OodScorer.Kind.EUCLIDEAN)) {
            OodScorer scorer = new OodScorer(r, k, st, layers, kind, c);
            for (int i = 0; i < qCodes.size(); i++) {
              String at = why + (pass == 1 ? " after compaction" : "") + " " + kind.label() + " bits " + bits + " round " + round + " k " + k + " C " + c
                  + " " + st.label + " query " + i;
              double want = bruteForce(codes, vectors, deleted, qCodes.code(i), Arrays.copyOfRange(qActs, i * d, i * d + d), units, k, c, st,
                  kind == OodScorer.Kind.EUCLIDEAN);
              assertThat(scorer.score(q, qActs, i).value()).as(at).isCloseTo(want, org.assertj.core.api.Assertions.within(1e-12));
            }
          }
        }
      }
    }
  }

  private double bruteForce(CodeBlock codes, float[][] vectors, RoaringBitmap deleted, long[] q, float[] query, int[] units, int k, int c,
      Statistic st, boolean euclidean) {
    List<int[]> byHamming = new ArrayList<>(); // {id, hamming}
    for (int id = 0; id < codes.size(); id++) {
      if (deleted.contains(id)) continue;
      long[] code = codes.code(id);
      int ham = 0;
      for (int u : units) ham += (int) ((q[u >>> 6] >>> (u & 63) ^ code[u >>> 6] >>> (u & 63)) & 1);
      byHamming.add(new int[] {id, ham});
    }
    byHamming.sort((a, b) -> Integer.compare(a[1], b[1]));
    int dc = byHamming.get(Math.min(c, byHamming.size()) - 1)[1];
    List<Double> dist = new ArrayList<>();
    for (int[] e : byHamming) if (e[1] <= dc) dist.add(euclidean ? euclidean(query, vectors[e[0]], units) : cosine(query, vectors[e[0]], units));
    dist.sort(null);
    if (dist.size() > k && dist.get(k - 1).equals(dist.get(k))) exactTies++;
    double sum = 0;
    for (int i = 0; i < k; i++) sum += dist.get(i);
    return st == Statistic.MEAN ? sum / k : dist.get(k - 1);
  }

  /** {@code 1 - a.b / (|a| |b|)} on the units, 1 when either is all zeros. */
  private static double cosine(float[] a, float[] b, int[] units) {
    double dot = 0, na = 0, nb = 0;
    for (int u : units) {
      dot += (double) a[u] * b[u];
      na += (double) a[u] * a[u];
      nb += (double) b[u] * b[u];
    }
    return na == 0 || nb == 0 ? 1 : 1 - dot / Math.sqrt(na * nb);
  }

  /** {@code sqrt(sum (a_u - b_u)^2)} over the units. */
  private static double euclidean(float[] a, float[] b, int[] units) {
    double sum = 0;
    for (int u : units) {
      double x = (double) a[u] - b[u];
      sum += x * x;
    }
    return Math.sqrt(sum);
  }

  private static float[] gaussian(SplittableRandom rnd, int m) {
    float[] v = new float[m];
    for (int i = 0; i < m; i++) v[i] = (float) rnd.nextGaussian();
    return v;
  }

  private static CodeBlock binarize(CodeLayout layout, float[] v, int n) {
    int d = layout.bits();
    boolean[][] rows = new boolean[n][d];
    for (int i = 0; i < n; i++) for (int j = 0; j < d; j++) rows[i][j] = v[i * d + j] > 0;
    return CodeBlock.fromBits(layout, rows);
  }

  private static Path npy(Path file, float[] v, int cols) throws Exception {
    try (NpyWriter w = NpyWriter.create(file, NpyDtype.FLOAT32, cols)) {
      double[] row = new double[cols];
      for (int i = 0; i < v.length / cols; i++) {
        for (int j = 0; j < cols; j++) row[j] = v[i * cols + j];
        w.write(row, 1);
      }
      w.commit();
    }
    return file;
  }

  @Test
  void commandsRecordTheScoreAndRefuseMismatches() throws Exception {
    Fixture f = fixture(Randoms.seed(7));
    Path dir = f.dir(), calFile = f.cal(), qFile = f.q();
    SyntheticCodes.Sample train = f.train();
    OodCalibrate.Result cd = OodCalibrate.run(dir, Source.activations(calFile), RowRange.ALL, new OodCalibrate.Params(3, Statistic.KTH, 0.9, null, false),
        Progress.NONE);
    assertThat(cd.scoring()).as("default on an index with magnitudes").isEqualTo(new OodCalibration.Scoring(OodScorer.Kind.EUCLIDEAN, 100));
    OodCalibrate.Result cr = OodCalibrate.run(dir, Source.activations(calFile), RowRange.ALL,
        new OodCalibrate.Params(3, Statistic.KTH, 0.9, null, false, OodScorer.Kind.REFINED, 0), Progress.NONE);
    assertThat(cr.scoring()).as("asked for the cosine").isEqualTo(new OodCalibration.Scoring(OodScorer.Kind.REFINED, 100));
    try (IndexReader r = IndexReader.open(dir)) {
      OodScore.Output o = OodScore.run(r, Source.activations(qFile), RowRange.ALL, new OodScore.Params(2), Progress.NONE);
      QuerySource.Queries qa = QuerySource.loadWithActivations(r, Source.activations(qFile), RowRange.ALL, Progress.NONE);
      OodScorer s = new OodScorer(r, 3, Statistic.KTH, null, OodScorer.Kind.REFINED, 100);
      for (int i = 0; i < 20; i++) {
        OodScore.Result x = o.results().get(i);
        assertThat(x.score()).isEqualTo(s.score(qa.codes(), qa.activations(), i).value());
        assertThat(x.out()).isEqualTo(x.score() > cr.calibration().threshold());
        assertThat(x.evidence()).hasSize(2);
      }
      Path codesFile = tmp.resolve("q-codes.npy");
      OodIndexTest.npy(codesFile, qa.codes().codes());
      assertThatThrownBy(() -> OodScore.run(r, Source.codes(codesFile), RowRange.ALL, new OodScore.Params(2), Progress.NONE))
          .isInstanceOf(BadInputException.class).hasMessageContaining("q-codes.npy").hasMessageContaining("`score` code");
      assertThatThrownBy(() -> OodScore.run(r, Source.activations(qFile), RowRange.ALL, new OodScore.Params(2, OodScorer.Kind.CODE), Progress.NONE))
          .isInstanceOf(BadInputException.class).hasMessageContaining("uses the refined score");
      assertThatThrownBy(() -> OodScore.decide(r, qa.codes())).isInstanceOf(BadInputException.class).hasMessageContaining("`OodScore.decide`");
      assertThatThrownBy(() -> OodEval.run(r, new OodEval.Params(Source.activations(calFile), Source.activations(qFile), null, null, null, 0,
          OodScorer.Kind.CODE), Progress.NONE)).isInstanceOf(BadInputException.class).hasMessageContaining("uses the refined score");
      OodEval.Result e = OodEval.run(r, new OodEval.Params(Source.activations(calFile), Source.activations(qFile), null, null, null), Progress.NONE);
      assertThat(e.refined()).isNotNull();
      assertThat(e.refined().in()).containsExactly(s.values(QuerySource.loadWithActivations(r, Source.activations(calFile), RowRange.ALL,
          Progress.NONE), Progress.NONE));
    }
    // the code score on the same index: stored, and the edge path works again
    OodCalibrate.Result cc = OodCalibrate.run(dir, Source.activations(calFile), RowRange.ALL,
        new OodCalibrate.Params(3, Statistic.KTH, 0.9, null, false, OodScorer.Kind.CODE, 0), Progress.NONE);
    assertThat(cc.scoring()).isEqualTo(OodCalibration.Scoring.CODE);
    try (IndexReader r = IndexReader.open(dir)) {
      assertThatThrownBy(() -> OodScore.run(r, Source.activations(qFile), RowRange.ALL, new OodScore.Params(2, OodScorer.Kind.REFINED), Progress.NONE))
          .isInstanceOf(BadInputException.class).hasMessageContaining("uses the code score");
      assertThat(OodScore.decide(r, QuerySource.load(r, Source.activations(qFile), RowRange.ALL)).out()).hasSize(20);
    }
    // an index without magnitudes: refined refused, naming how to get them
    Path noMag = tmp.resolve("codes-idx");
    OodIndexTest.index(noMag, train.codes());
    assertThatThrownBy(() -> OodCalibrate.run(noMag, Source.activations(calFile), RowRange.ALL,
        new OodCalibrate.Params(3, Statistic.KTH, 0.9, null, false, OodScorer.Kind.REFINED, 0), Progress.NONE))
        .isInstanceOf(BadInputException.class).hasMessageContaining("keeps no magnitudes");
    assertThat(Files.exists(noMag)).isTrue();
  }

  @Test
  void euclideanCalibrationIsStoredScoredAndEvaluatedBesideTheCosine() throws Exception {
    Fixture f = fixture(Randoms.seed(11));
    Path dir = f.dir(), calFile = f.cal(), qFile = f.q();
    SyntheticCodes.Sample train = f.train();
    OodCalibrate.Result cr = OodCalibrate.run(dir, Source.activations(calFile), RowRange.ALL,
        new OodCalibrate.Params(3, Statistic.MEAN, 0.9, null, false, OodScorer.Kind.EUCLIDEAN, 40), Progress.NONE);
    assertThat(cr.scoring()).isEqualTo(new OodCalibration.Scoring(OodScorer.Kind.EUCLIDEAN, 40));
    try (IndexReader r = IndexReader.open(dir)) {
      assertThat(new String(r.attachment(OodCalibration.ATTACHMENT), java.nio.charset.StandardCharsets.UTF_8))
          .contains("score=euclidean\n").contains("candidates=40\n");
      assertThat(OodCalibration.scoring(r)).isEqualTo(cr.scoring());
      OodScore.Output o = OodScore.run(r, Source.activations(qFile), RowRange.ALL, new OodScore.Params(2), Progress.NONE);
      assertThat(o.scoreName()).isEqualTo("refined euclidean mean distance");
      QuerySource.Queries qa = QuerySource.loadWithActivations(r, Source.activations(qFile), RowRange.ALL, Progress.NONE);
      QuerySource.Queries ca = QuerySource.loadWithActivations(r, Source.activations(calFile), RowRange.ALL, Progress.NONE);
      OodScorer euclid = new OodScorer(r, 3, Statistic.MEAN, null, OodScorer.Kind.EUCLIDEAN, 40);
      OodScorer cosine = new OodScorer(r, 3, Statistic.MEAN, null, OodScorer.Kind.REFINED, 40);
      double[] calScores = euclid.values(ca, Progress.NONE);
      Arrays.sort(calScores);
      assertThat(cr.calibration().scores()).containsExactly(calScores);
      for (int i = 0; i < 20; i++) {
        OodScore.Result x = o.results().get(i);
        assertThat(x.score()).isEqualTo(euclid.score(qa.codes(), qa.activations(), i).value());
        assertThat(x.out()).isEqualTo(x.score() > cr.calibration().threshold());
      }
      OodEval.Result e = OodEval.run(r, new OodEval.Params(Source.activations(calFile), Source.activations(qFile), null, null, null), Progress.NONE);
      assertThat(e.euclidean().in()).containsExactly(euclid.values(ca, Progress.NONE));
      assertThat(e.euclidean().out()).containsExactly(euclid.values(qa, Progress.NONE));
      assertThat(e.refined().out()).containsExactly(cosine.values(qa, Progress.NONE));
      assertThat(e.scores().getLast()).isSameAs(e.euclidean());
      assertThatThrownBy(() -> OodScore.run(r, Source.activations(qFile), RowRange.ALL, new OodScore.Params(2, OodScorer.Kind.REFINED), Progress.NONE))
          .isInstanceOf(BadInputException.class).hasMessageContaining("uses the euclidean score");
      assertThatThrownBy(() -> OodScore.decide(r, qa.codes())).isInstanceOf(BadInputException.class).hasMessageContaining("uses the euclidean score");
      assertThatThrownBy(() -> EdgeExport.bundle(r, OodCalibration.load(r), false)).isInstanceOf(BadInputException.class)
          .hasMessageContaining("the edge bundle").hasMessageContaining("uses the euclidean score");
    }
    // an index without magnitudes: euclidean refused, naming the index and how to get them
    Path noMag = tmp.resolve("codes-idx");
    OodIndexTest.index(noMag, train.codes());
    assertThatThrownBy(() -> OodCalibrate.run(noMag, Source.activations(calFile), RowRange.ALL,
        new OodCalibrate.Params(3, Statistic.KTH, 0.9, null, false, OodScorer.Kind.EUCLIDEAN, 0), Progress.NONE))
        .isInstanceOf(BadInputException.class).hasMessageContaining("keeps no magnitudes").hasMessageContaining(noMag.toString());
  }

  /** An index built from 300 training activations with kept magnitudes, 60 calibration and 20 query rows as files. */
  private record Fixture(Path dir, Path cal, Path q, SyntheticCodes.Sample train) {}

  private Fixture fixture(long seed) throws Exception {
    SyntheticCodes.ReluNet net = new SyntheticCodes.ReluNet(8, 40, 20, 5, seed);
    SyntheticCodes.Sample train = net.sample(300, 0, seed + 1), cal = net.sample(60, 0, seed + 2), q = net.sample(20, 2, seed + 3);
    int d = train.codes().layout().bits();
    Path dir = tmp.resolve("idx");
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(npy(tmp.resolve("train.npy"), train.activations(), d)), null,
        EncodeOptions.positive(), null, 0), Progress.NONE);
    return new Fixture(dir, npy(tmp.resolve("cal.npy"), cal.activations(), d), npy(tmp.resolve("q.npy"), q.activations(), d), train);
  }
}
