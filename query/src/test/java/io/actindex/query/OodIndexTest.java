package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Hits;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.edge.BundleFormat;
import io.actindex.edge.EdgeBundle;
import io.actindex.edge.EdgeBundle.Calibration;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.edge.EdgeFormatException;
import io.actindex.encode.EncodeOptions;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.security.MessageDigest;
import java.util.ArrayList;
import java.util.HexFormat;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * OOD scoring on real index folders, against the brute-force k-NN of core's tests (bit by bit):
 * the score, the decision-only path, the edge bundle built from the index (and read back from its
 * bytes), calibration stored and read back, and every refusal (nothing written).
 */
class OodIndexTest {
  @TempDir Path tmp;

  /** An index of {@code codes} built "from codes", with keys k0, k1, ... and deletions of every 11th id. */
  static Path index(Path dir, CodeBlock codes) {
    CodeLayout layout = codes.layout();
    try (IndexWriter w = IndexWriter.create(dir, layout, new BuildInfo(Source.Kind.CODES, layout, false, EncodeOptions.positive()).toProperties())) {
      List<Map<String, String>> rows = new ArrayList<>();
      for (int i = 0; i < codes.size(); i++) rows.add(Map.of("key", "k" + i));
      int half = codes.size() / 2;
      w.add(codes.slice(0, half), rows.subList(0, half));
      w.add(codes.slice(half, codes.size()), rows.subList(half, codes.size()));
      org.roaringbitmap.RoaringBitmap dead = new org.roaringbitmap.RoaringBitmap();
      for (int i = 0; i < codes.size(); i += 11) dead.add(i);
      w.delete(dead.toArray());
    }
    return dir;
  }

  /** Codes as a 0/1 uint8 .npy, one column per bit. */
  static Path npy(Path file, CodeBlock codes) {
    int bits = codes.layout().bits();
    byte[] v = new byte[codes.size() * bits];
    for (int i = 0; i < codes.size(); i++) for (int b = 0; b < bits; b++) v[i * bits + b] = (byte) (codes.bit(i, b) ? 1 : 0);
    return TestFiles.npyUint8(file, codes.size(), bits, v);
  }

  /** The live codes of the fixture (every 11th id deleted). */
  static CodeBlock live(CodeBlock codes) {
    List<Integer> keep = new ArrayList<>();
    for (int i = 0; i < codes.size(); i++) if (i % 11 != 0) keep.add(i);
    int w = codes.wordsPerCode();
    long[] words = new long[keep.size() * w];
    for (int j = 0; j < keep.size(); j++) System.arraycopy(codes.words(), keep.get(j) * w, words, j * w, w);
    return new CodeBlock(codes.layout(), keep.size(), words);
  }

  static double reference(CodeBlock live, long[] q, int k, Statistic st, long[] mask) {
    Hits h = BruteForce.knn(live, q, k, null, mask);
    long sum = 0;
    for (int i = 0; i < k; i++) sum += h.dist(i);
    return st == Statistic.MEAN ? sum / (double) k : h.dist(k - 1);
  }

  /**
   * ReLU-like training codes, in-distribution and shifted queries of the same network. The shift is
   * 4 (it was 2.5: with -Dtests.seed=e35f358e69c7e668 none of the 40 far queries scored over the 90%
   * threshold, so "some far queries flagged" failed on the data, every score matching the brute force).
   */
  record Data(CodeBlock train, CodeBlock cal, CodeBlock queries) {}

  static Data relu(long seed, int n) {
    SyntheticCodes.ReluNet net = new SyntheticCodes.ReluNet(32, 48, 24, 12, seed);
    CodeBlock in = net.sample(80, 0, seed + 2).codes(), far = net.sample(40, 4.0, seed + 3).codes();
    return new Data(net.sample(n, 0, seed + 1).codes(), net.sample(60, 0, seed + 4).codes(), in.concat(far));
  }

  static Data uniform(long seed, int n) {
    CodeBlock all = SyntheticCodes.uniform(n + 160, 70, seed);
    CodeBlock codes = new CodeBlock(CodeLayout.parse("a:40,b:30"), all.size(), all.words());
    return new Data(codes.slice(0, n), codes.slice(n, n + 60), codes.slice(n + 60, n + 160));
  }

  @Test
  void scoresDecisionsAndTheBundleAgreeWithBruteForce() throws IOException {
    for (int rep = 0; rep < 6; rep++) {
      long seed = Randoms.seed(rep);
      Data d = rep % 2 == 0 ? relu(seed, 700) : uniform(seed, 500);
      Path dir = index(tmp.resolve("idx" + rep), d.train());
      CodeBlock live = live(d.train());
      List<String> layers = rep % 3 == 2 ? List.of(d.train().layout().segments().get(1).name()) : List.of();
      long[] mask = layers.isEmpty() ? null : d.train().layout().mask(1);
      int k = List.of(1, 5, 10).get(rep % 3);
      Statistic st = rep % 4 < 2 ? Statistic.KTH : Statistic.MEAN;
      OodCalibrate.Result cr = OodCalibrate.run(dir, Source.codes(npy(tmp.resolve("cal" + rep + ".npy"), d.cal())), RowRange.ALL,
          new OodCalibrate.Params(k, st, 0.9, layers, false), Progress.NONE);
      // calibration: the reference scores of the calibration codes, sorted, and the conformal threshold
      double[] expected = new double[d.cal().size()];
      for (int i = 0; i < expected.length; i++) expected[i] = reference(live, d.cal().code(i), k, st, mask);
      java.util.Arrays.sort(expected);
      String what = Randoms.describe(seed);
      assertThat(cr.calibration().scores()).as(what).containsExactly(expected);
      assertThat(cr.calibration().threshold()).as(what).isEqualTo(expected[(int) Math.ceil(0.9 * 61 - 1e-9) - 1]);
      try (IndexReader r = IndexReader.open(dir)) {
        Calibration cal = OodCalibration.load(r);
        assertThat(cal.scores()).containsExactly(expected);
        assertThat(cal.layers()).isEqualTo(layers);
        QueryCodes q = QuerySource.load(r, Source.codes(npy(tmp.resolve("q" + rep + ".npy"), d.queries())), RowRange.ALL);
        OodScore.Output o = OodScore.run(r, Source.codes(tmp.resolve("q" + rep + ".npy")), RowRange.ALL, new OodScore.Params(3), Progress.NONE);
        boolean[] decide = OodScore.decide(r, q).out();
        EdgeBundle fromBytes = BundleFormat.read(BundleFormat.toBytes(EdgeExport.bundle(r, cal, false)), "test");
        assertThat(fromBytes.examples()).isEqualTo(live.size());
        int outs = 0;
        for (int i = 0; i < q.size(); i++) {
          long[] code = q.codes().code(i);
          double ref = reference(live, code, k, st, mask);
          OodScore.Result res = o.results().get(i);
          assertThat(res.score()).as(what + " query " + i).isEqualTo(ref);
          assertThat(res.out()).isEqualTo(ref > cal.threshold());
          assertThat(decide[i]).as(what + " decision-only, query " + i).isEqualTo(ref > cal.threshold());
          assertThat(res.pValue()).isEqualTo(EdgeBundle.pValue(expected, ref));
          assertThat(res.ownRegion()).isEqualTo(BruteForce.radius(live, code, 0, null, mask).size() > 0);
          assertThat(res.evidence()).hasSize(Math.min(3, k));
          assertThat(res.maxSoftmax()).isNull();
          EdgeBundle.Score es = fromBytes.score(code);
          assertThat(es.value()).as(what + " edge, query " + i).isEqualTo(ref);
          assertThat(es.ownRegion()).isEqualTo(BruteForce.radius(live, code, 0, null, mask).size());
          assertThat(fromBytes.isOut(code)).isEqualTo(ref > cal.threshold());
          for (int kk : new int[] {1, 3, 7})
            assertThat(fromBytes.score(code, kk, mask, Statistic.MEAN).mean()).isEqualTo(reference(live, code, kk, Statistic.MEAN, mask));
          if (res.out()) outs++;
        }
        if (d.train().layout().segments().get(0).name().equals("h1") && layers.isEmpty())
          assertThat(outs).as(what + ": some far queries flagged").isPositive();
      }
    }
  }

  @Test
  void bundleStoresUniqueCodesMostSharedFirst() throws IOException {
    CodeLayout layout = CodeLayout.parse("x:3");
    long[] w = {5, 1, 5, 5, 2, 1, 7, 2, 2, 2, 0, 0};
    Path dir = index(tmp.resolve("dups"), new CodeBlock(layout, w.length, w)); // ids 0 and 11 deleted
    OodCalibrate.run(dir, Source.codes(npy(tmp.resolve("c.npy"), new CodeBlock(layout, 20, new long[20]))), RowRange.ALL,
        new OodCalibrate.Params(1, Statistic.KTH, 0.9, null, false), Progress.NONE);
    try (IndexReader r = IndexReader.open(dir)) {
      EdgeBundle b = EdgeExport.bundle(r, OodCalibration.load(r), false);
      Map<Long, Integer> got = new TreeMap<>();
      for (int i = 0; i < b.uniqueCodes(); i++) got.put(b.code(i)[0], b.count(i));
      assertThat(got).isEqualTo(Map.of(2L, 4, 1L, 2, 5L, 2, 7L, 1, 0L, 1));
      assertThat(b.code(0)[0]).isEqualTo(2L); // most shared first
      assertThat(b.code(1)[0]).isEqualTo(1L); // ties by first id: code 1 at id 1, code 5 at id 2
      assertThat(b.examples()).isEqualTo(10);
    }
  }

  @Test
  void refusalsWriteNothing() throws Exception {
    Data d = relu(Randoms.seed(0), 300);
    Path dir = index(tmp.resolve("idx"), d.train());
    Path cal = npy(tmp.resolve("cal.npy"), d.cal());
    Map<String, String> before = checksums(dir);
    try (IndexReader r = IndexReader.open(dir)) {
      assertThatThrownBy(() -> OodScore.run(r, Source.codes(cal), RowRange.ALL, new OodScore.Params(3), Progress.NONE))
          .isInstanceOf(BadInputException.class).hasMessageContaining("no OOD calibration stored");
      assertThatThrownBy(() -> EdgeExport.run(r, new EdgeExport.Params(tmp.resolve("b.edge"), false, null)))
          .isInstanceOf(BadInputException.class).hasMessageContaining("run 'actindex ood calibrate'");
    }
    assertThatThrownBy(() -> OodCalibrate.run(dir, Source.codes(cal), RowRange.parse("0:10"), new OodCalibrate.Params(1, null, 0.95, null, false),
        Progress.NONE)).isInstanceOf(BadInputException.class).hasMessageContaining("10 calibration inputs").hasMessageContaining("needs at least 19");
    assertThatThrownBy(() -> OodCalibrate.run(dir, Source.codes(cal), RowRange.ALL, new OodCalibrate.Params(1000, null, 0.95, null, false),
        Progress.NONE)).isInstanceOf(BadInputException.class).hasMessageStartingWith("k 1000 is larger than the index");
    Path narrow = npy(tmp.resolve("narrow.npy"), SyntheticCodes.uniform(30, 50, 1));
    assertThatThrownBy(() -> OodCalibrate.run(dir, Source.codes(narrow), RowRange.ALL, new OodCalibrate.Params(1, null, 0.95, null, false),
        Progress.NONE)).isInstanceOf(BadInputException.class).hasMessageContaining("narrow.npy").hasMessageContaining("72 bits");
    Path own = npy(tmp.resolve("own.npy"), d.train());
    assertThatThrownBy(() -> OodCalibrate.run(dir, Source.codes(own), RowRange.ALL, new OodCalibrate.Params(1, null, 0.95, null, true),
        Progress.NONE)).isInstanceOf(BadInputException.class).hasMessageContaining("look like training rows");
    assertThatThrownBy(() -> OodCalibrate.run(dir, Source.codes(cal), RowRange.ALL, new OodCalibrate.Params(1, null, 0.95, List.of("nope"), false),
        Progress.NONE)).isInstanceOf(BadInputException.class).hasMessageContaining("unknown layer 'nope'");
    assertThat(checksums(dir)).isEqualTo(before);
    assertThat(tmp.resolve("b.edge")).doesNotExist();
  }

  /** A null progress means none, as for the other operations (OodEval threw a NullPointerException). */
  @Test
  void evaluationRunsWithoutProgress() throws Exception {
    Data d = relu(Randoms.seed(0), 300);
    Path dir = index(tmp.resolve("idx"), d.train());
    Path cal = npy(tmp.resolve("cal.npy"), d.cal()), queries = npy(tmp.resolve("q.npy"), d.queries());
    OodCalibrate.run(dir, Source.codes(cal), RowRange.ALL, new OodCalibrate.Params(5, null, 0.95, null, false), null);
    try (IndexReader r = IndexReader.open(dir)) {
      OodEval.Params p = new OodEval.Params(Source.codes(cal), Source.codes(queries), null, null, null);
      OodEval.Result quiet = OodEval.run(r, p, null), counted = OodEval.run(r, p, Progress.NONE);
      assertThat(quiet.code().in()).containsExactly(counted.code().in());
      assertThat(quiet.code().out()).containsExactly(counted.code().out());
      assertThat(quiet.variants()).isEqualTo(counted.variants());
      // the scorer's own loop over codes takes a null progress too
      OodScorer scorer = new OodScorer(r, 5, null, null, OodScorer.Kind.CODE, 0);
      CodeBlock qc = QuerySource.load(r, Source.codes(queries), RowRange.ALL).codes();
      assertThat(scorer.values(qc, null)).containsExactly(scorer.values(qc, Progress.NONE));
    }
  }

  /**
   * {@code ood eval --in} given the training file (as {@code ood calibrate} warns of it): the k = 1
   * variants reach AUROC 1 on rows the index holds, so a warning says the metrics are optimistic;
   * held-out rows of the same network get none.
   */
  @Test
  void evaluationOnTrainingRowsWarns() throws Exception {
    Data d = relu(Randoms.seed(0), 300);
    Path dir = index(tmp.resolve("idx"), d.train());
    Path cal = npy(tmp.resolve("cal.npy"), d.cal()), train = npy(tmp.resolve("train.npy"), d.train());
    Path queries = npy(tmp.resolve("q.npy"), d.queries());
    OodCalibrate.run(dir, Source.codes(cal), RowRange.ALL, new OodCalibrate.Params(5, null, 0.95, null, false), Progress.NONE);
    try (IndexReader r = IndexReader.open(dir)) {
      OodEval.Result onTrain = OodEval.run(r, new OodEval.Params(Source.codes(train), Source.codes(queries), null, null, null), Progress.NONE);
      assertThat(onTrain.warnings()).anySatisfy(w -> assertThat(w).startsWith(train + ": ")
          .contains("rows have exactly the code of the index example with the same id").contains("optimistically low"));
      OodEval.Result heldOut = OodEval.run(r, new OodEval.Params(Source.codes(cal), Source.codes(queries), null, null, null), Progress.NONE);
      assertThat(heldOut.warnings()).noneSatisfy(w -> assertThat(w).contains("optimistically"));
    }
  }

  /** An empty --in or --out file is named (the message said only "needs rows in both --in and --out"). */
  @Test
  void anEmptyEvaluationFileIsNamed() throws Exception {
    Data d = relu(Randoms.seed(0), 300);
    Path dir = index(tmp.resolve("idx"), d.train());
    Path cal = npy(tmp.resolve("cal.npy"), d.cal());
    Path empty = npy(tmp.resolve("empty.npy"), d.cal().slice(0, 0));
    OodCalibrate.run(dir, Source.codes(cal), RowRange.ALL, new OodCalibrate.Params(1, null, 0.95, null, false), Progress.NONE);
    try (IndexReader r = IndexReader.open(dir)) {
      assertThatThrownBy(() -> OodEval.run(r, new OodEval.Params(Source.codes(cal), Source.codes(empty), null, null, null), Progress.NONE))
          .isInstanceOf(BadInputException.class).hasMessageContaining("empty.npy").hasMessageContaining("`out`");
      assertThatThrownBy(() -> OodEval.run(r, new OodEval.Params(Source.codes(empty), Source.codes(cal), null, null, null), Progress.NONE))
          .isInstanceOf(BadInputException.class).hasMessageContaining("empty.npy").hasMessageContaining("`in`");
    }
  }

  @Test
  void damagedBundlesAreRefused() throws IOException {
    Data d = relu(Randoms.seed(1), 200);
    Path dir = index(tmp.resolve("idx"), d.train());
    OodCalibrate.run(dir, Source.codes(npy(tmp.resolve("cal.npy"), d.cal())), RowRange.ALL, new OodCalibrate.Params(5, null, 0.95, null, false),
        Progress.NONE);
    byte[] good;
    try (IndexReader r = IndexReader.open(dir)) {
      good = BundleFormat.toBytes(EdgeExport.bundle(r, OodCalibration.load(r), false));
    }
    BundleFormat.read(good, "ok");
    java.util.SplittableRandom rnd = new java.util.SplittableRandom(Randoms.seed(2));
    for (int t = 0; t < 300; t++) {
      byte[] bad = good.clone();
      int pos = t < 40 ? t : rnd.nextInt(bad.length);
      bad[pos] ^= (byte) (1 << rnd.nextInt(8));
      assertThatThrownBy(() -> BundleFormat.read(bad, "bad.edge")).as("flip at " + pos).isInstanceOf(EdgeFormatException.class)
          .hasMessageStartingWith("bad.edge: ");
    }
    for (int len : new int[] {0, 5, 20, good.length / 2, good.length - 1})
      assertThatThrownBy(() -> BundleFormat.read(java.util.Arrays.copyOf(good, len), "cut.edge")).isInstanceOf(EdgeFormatException.class);
    byte[] foreign = Files.readAllBytes(npy(tmp.resolve("f.npy"), d.cal()));
    assertThatThrownBy(() -> BundleFormat.read(foreign, "f.npy")).isInstanceOf(EdgeFormatException.class).hasMessageContaining("not an actindex edge bundle");
  }

  static Map<String, String> checksums(Path dir) throws Exception {
    Map<String, String> out = new TreeMap<>();
    try (Stream<Path> s = Files.walk(dir)) {
      for (Path p : (Iterable<Path>) s::iterator)
        if (Files.isRegularFile(p) && !p.getFileName().toString().equals("write.lock") && !p.getFileName().toString().equals("writer.lock"))
          out.put(dir.relativize(p).toString(), HexFormat.of().formatHex(MessageDigest.getInstance("SHA-256").digest(Files.readAllBytes(p))));
    }
    return out;
  }
}
