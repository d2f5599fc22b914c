package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import io.actindex.query.report.HtmlPage;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code ood calibrate|score|eval} and {@code export-edge} through {@code Main.run} on generated
 * code files: JSON (read back with Jackson) against a bit-by-bit k-NN, the conformal threshold and
 * p-value formulas, and the pair-by-pair Mann-Whitney count, all computed in this test; every
 * refusal exits 2 with one line and leaves the index byte-identical.
 */
class OodEndToEndTest {
  @TempDir Path tmp;
  static final ObjectMapper JSON = new ObjectMapper();
  static final int BITS = 40;

  /** Clustered bit rows: each row copies one of 6 prototypes with a few bits flipped ({@code noise} per bit). */
  static boolean[][] rows(int n, double noise, long seed) {
    SplittableRandom proto = new SplittableRandom(99), rnd = new SplittableRandom(seed);
    boolean[][] p = new boolean[6][BITS];
    for (boolean[] r : p) for (int j = 0; j < BITS; j++) r[j] = proto.nextBoolean();
    boolean[][] out = new boolean[n][];
    for (int i = 0; i < n; i++) {
      out[i] = p[rnd.nextInt(6)].clone();
      for (int j = 0; j < BITS; j++) if (rnd.nextDouble() < noise) out[i][j] = !out[i][j];
    }
    return out;
  }

  private static String[] csvHeader(Cli.Result csv) {
    return csv.out().lines().findFirst().orElseThrow().split(",");
  }

  static int kth(boolean[][] train, boolean[] q, int k) {
    int[] d = new int[train.length];
    for (int i = 0; i < train.length; i++) for (int j = 0; j < BITS; j++) if (train[i][j] != q[j]) d[i]++;
    Arrays.sort(d);
    return d[k - 1];
  }

  @Test
  void calibrateScoreEvalAndExport() throws Exception {
    boolean[][] train = rows(400, 0.05, 1), cal = rows(60, 0.05, 2), in = rows(50, 0.05, 3), out = rows(50, 0.3, 4);
    Path idx = tmp.resolve("idx");
    Path trainF = Files2.bits(tmp.resolve("train.npy"), train), calF = Files2.bits(tmp.resolve("cal.npy"), cal);
    Path inF = Files2.bits(tmp.resolve("in.npy"), in), outF = Files2.bits(tmp.resolve("out.npy"), out);
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--codes", trainF.toString());
    assertThat(b.code()).as(b.describe()).isZero();

    Cli.Result c = Cli.run("ood", "calibrate", "--index", idx.toString(), "--codes", calF.toString(), "-k", "3", "--tpr", "0.9", "--format", "json");
    assertThat(c.code()).as(c.describe()).isZero();
    JsonNode cj = JSON.readTree(c.out());
    double[] calScores = new double[cal.length];
    for (int i = 0; i < cal.length; i++) calScores[i] = kth(train, cal[i], 3);
    Arrays.sort(calScores);
    double threshold = calScores[(int) Math.ceil(0.9 * 61 - 1e-9) - 1]; // split-conformal rank ceil(tpr (n + 1))
    assertThat(cj.get("threshold").asDouble()).isEqualTo(threshold);
    assertThat(cj.get("calibration_inputs").asInt()).isEqualTo(60);
    assertThat(cj.get("caution").asText()).contains("not a guarantee");

    Cli.Result s = Cli.run("ood", "score", "--index", idx.toString(), "--codes", inF.toString(), "--format", "json");
    assertThat(s.code()).as(s.describe()).isZero();
    JsonNode results = JSON.readTree(s.out()).get("results");
    Cli.Result d = Cli.run("ood", "score", "--index", idx.toString(), "--codes", inF.toString(), "--decision-only", "--format", "json");
    JsonNode decisions = JSON.readTree(d.out()).get("results");
    for (int i = 0; i < in.length; i++) {
      JsonNode r = results.get(i);
      double score = kth(train, in[i], 3);
      int ge = 0;
      for (double v : calScores) if (v >= score) ge++;
      assertThat(r.get("score").asDouble()).as("query " + i).isEqualTo(score);
      assertThat(r.get("decision").asText()).isEqualTo(score > threshold ? "out" : "in");
      assertThat(decisions.get(i).get("decision").asText()).isEqualTo(r.get("decision").asText());
      assertThat(r.get("p_value").asDouble()).isEqualTo((1.0 + ge) / 61.0);
      assertThat(r.get("evidence")).hasSize(3);
      assertThat(r.get("evidence").get(0).get("key").asText()).startsWith("row-");
      assertThat(r.get("max_softmax").isNull()).isTrue();
    }
    Cli.Result csv = Cli.run("ood", "score", "--index", idx.toString(), "--codes", inF.toString(), "--rows", "0:2", "--format", "csv");
    assertThat(csv.out().lines().toList()).hasSize(3).first().isEqualTo("query,score,kth,mean,own_region,decision,p_value,max_softmax,evidence,score_name");
    assertThat(csv.out().lines().skip(1)).allMatch(l -> l.endsWith(",code k-th distance"));
    List<String[]> csvRows = CsvCells.rows(csv.out());
    for (int i = 0; i < csvRows.size(); i++) { // evidence: key:distance items separated by ';' (docs/commands/README.md)
      List<String> want = new ArrayList<>();
      for (JsonNode ev : results.get(i).get("evidence")) want.add(ev.get("key").asText() + ":" + ev.get("distance").asInt());
      assertThat(CsvCells.items(csvRows.get(i)[8])).as("query " + i).hasSize(3).isEqualTo(want);
      // numbers: the same text as in JSON (a whole number without ".0"), in every command's CSV
      for (int col : new int[] {1, 2, 3, 6})
        assertThat(csvRows.get(i)[col]).as("query " + i + " column " + col).isEqualTo(results.get(i).get(csvHeader(csv)[col]).toString());
    }
    Cli.Result cc = Cli.run("ood", "calibrate", "--index", idx.toString(), "--codes", calF.toString(), "-k", "3", "--tpr", "0.9", "--format", "csv");
    String[] calCsv = CsvCells.rows(cc.out()).getFirst();
    assertThat(calCsv[5]).isEqualTo(cj.get("threshold").toString());
    for (int col = 6; col < 13; col++) assertThat(calCsv[col]).as(csvHeader(cc)[col]).isEqualTo(cj.get("scores").get(csvHeader(cc)[col]).toString());
    assertThat(JSON.readTree(s.out()).get("score_name").asText()).isEqualTo("code k-th distance");
    assertThat(JSON.readTree(d.out()).get("score_name").asText()).isEqualTo("code k-th distance");
    assertThat(Cli.run("ood", "score", "--index", idx.toString(), "--codes", inF.toString(), "--rows", "0:1").out())
        .startsWith("score: code k-th distance (k=3, layers all)\nthreshold " + OodCommand.num(threshold) + " (target TPR 0.9, 60 calibration inputs)");
    assertThat(csv.err()).startsWith("caution: ");

    Path html = tmp.resolve("eval.html"), roc = tmp.resolve("roc.csv");
    Cli.Result e = Cli.run("ood", "eval", "--index", idx.toString(), "--in", inF.toString(), "--out", outF.toString(), "--kind", "codes",
        "--html", html.toString(), "--roc", roc.toString(), "--format", "json");
    assertThat(e.code()).as(e.describe()).isZero();
    JsonNode code = JSON.readTree(e.out()).get("scores").get(0);
    double u = 0;
    for (boolean[] a : in) for (boolean[] o : out) {
      int sa = kth(train, a, 3), so = kth(train, o, 3);
      u += so > sa ? 1 : so == sa ? 0.5 : 0;
    }
    assertThat(code.get("auroc").asDouble()).isCloseTo(u / (in.length * out.length), org.assertj.core.api.Assertions.within(1e-12));
    assertThat(Files.readString(html)).contains("<svg", "ROC curves", "not a guarantee").doesNotContain("<script");
    assertThat(Files.readAllLines(roc).getFirst()).isEqualTo("score,threshold,false_alarm_rate,detection_rate");

    Path bundle = tmp.resolve("b.edge");
    Cli.Result x = Cli.run("export-edge", "--index", idx.toString(), "--out", bundle.toString(), "--c-source", tmp.resolve("c").toString(),
        "--format", "json");
    assertThat(x.code()).as(x.describe()).isZero();
    JsonNode xj = JSON.readTree(x.out());
    assertThat(xj.get("bytes").asLong()).isEqualTo(Files.size(bundle));
    assertThat(xj.get("examples").asInt()).isEqualTo(400);
    assertThat(tmp.resolve("c").resolve("actindex_edge.c")).exists();
    // every output follows the umask like any new file (was 0600 for these four from Files.createTempFile)
    if (Files.getFileStore(tmp).supportsFileAttributeView("posix")) {
      var mode = Files.getPosixFilePermissions(Files.createFile(tmp.resolve("plain-new-file")));
      for (Path f : List.of(html, roc, bundle, tmp.resolve("c").resolve("actindex_edge.c"), tmp.resolve("c").resolve("actindex_edge.h")))
        assertThat(Files.getPosixFilePermissions(f)).as(f.toString()).isEqualTo(mode);
      try (var left = Files.list(tmp)) {
        assertThat(left.map(p -> p.getFileName().toString())).noneMatch(n -> n.endsWith(".tmp"));
      }
    }
    Cli.Result t = Cli.run("ood", "score", "--index", idx.toString(), "--codes", inF.toString(), "--rows", "0:1");
    assertThat(t.out()).contains("caution: A calibrated heuristic, not a guarantee");
  }

  @Test
  void refusalsExitTwoWithOneLineAndWriteNothing() {
    boolean[][] train = rows(100, 0.05, 1);
    Path idx = tmp.resolve("idx");
    Path trainF = Files2.bits(tmp.resolve("train.npy"), train), cal = Files2.bits(tmp.resolve("cal.npy"), rows(10, 0.05, 2));
    Path wide = Files2.bits(tmp.resolve("wide.npy"), new boolean[30][BITS + 3]);
    assertThat(Cli.run("build", "--out", idx.toString(), "--codes", trainF.toString()).code()).isZero();
    Map<String, String> before = Files2.checksums(idx);
    String i = idx.toString();
    String[][] bad = {
        {"ood", "score", "--index", i, "--codes", cal.toString()},
        {"ood", "eval", "--index", i, "--in", cal.toString(), "--out", cal.toString(), "--kind", "codes", "--html", tmp.resolve("e.html").toString()},
        {"export-edge", "--index", i, "--out", tmp.resolve("b.edge").toString()},
        {"ood", "calibrate", "--index", i, "--codes", cal.toString()},
        {"ood", "calibrate", "--index", i, "--codes", wide.toString()},
        {"ood", "calibrate", "--index", i, "--codes", trainF.toString(), "-k", "101"},
        {"ood", "calibrate", "--index", i, "--codes", trainF.toString(), "--tpr", "1.5"},
        {"ood", "calibrate", "--index", i, "--codes", trainF.toString(), "--statistic", "median"},
        {"ood", "calibrate", "--index", i},
    };
    String[] expect = {"no OOD calibration stored", "no OOD calibration stored", "no OOD calibration stored", "needs at least 19", "(30, 43)",
        "larger than the index", "--tpr", "--statistic", "exactly one query source"};
    for (int t = 0; t < bad.length; t++) {
      Cli.Result r = Cli.run(bad[t]);
      assertThat(r.code()).as(r.describe()).isEqualTo(2);
      assertThat(r.err().lines().filter(l -> !l.isBlank()).findFirst().orElse("")).as(r.describe()).contains(expect[t]);
      if (t < 7) assertThat(r.err().lines().count()).as(r.describe()).isEqualTo(1);
    }
    // --html/--roc onto a folder: was an internal error (exit 1) when the page was moved into place
    for (String opt : List.of("--html", "--roc")) {
      Cli.Result r = Cli.run("ood", "eval", "--index", i, "--in", cal.toString(), "--out", cal.toString(), "--kind", "codes", opt, tmp.toString());
      assertThat(r.code()).as(r.describe()).isEqualTo(2);
      assertThat(r.err().strip().lines().count()).as(r.describe()).isEqualTo(1);
      assertThat(r.err()).as(r.describe()).contains("is a folder");
    }
    assertThat(Files2.checksums(idx)).isEqualTo(before);
    assertThat(tmp.resolve("b.edge")).doesNotExist();
    assertThat(tmp.resolve("e.html")).doesNotExist();
    // with a calibration stored: --with-model on an index without a model is refused too
    assertThat(Cli.run("ood", "calibrate", "--index", i, "--codes", Files2.bits(tmp.resolve("c2.npy"), rows(40, 0.05, 5)).toString()).code()).isZero();
    Cli.Result m = Cli.run("export-edge", "--index", i, "--out", tmp.resolve("b.edge").toString(), "--with-model");
    assertThat(m.code()).as(m.describe()).isEqualTo(2);
    assertThat(m.err()).contains("holds no model");
    assertThat(tmp.resolve("b.edge")).doesNotExist();
  }

  /**
   * Calibrating on the training file (a common slip): rows whose code is that of the index example
   * with the same id give a warning (stderr and JSON), and with {@code --check-overlap} a refusal
   * that leaves the index unchanged; the training rows in another order (no same-id match) still
   * warn, since every one of them scores 0 and so does the threshold. Held-out rows warn of nothing.
   */
  @Test
  void calibratingOnTrainingRowsWarnsOrIsRefused() throws Exception {
    boolean[][] train = rows(200, 0.05, 1), heldOut = rows(60, 0.05, 2);
    boolean[][] shuffled = new boolean[train.length][];
    for (int r = 0; r < train.length; r++) shuffled[r] = train[(r * 37 + 11) % train.length]; // 37 and 200 coprime: a permutation
    Path idx = tmp.resolve("idx");
    Path trainF = Files2.bits(tmp.resolve("train.npy"), train), shuffledF = Files2.bits(tmp.resolve("shuffled.npy"), shuffled);
    Path heldF = Files2.bits(tmp.resolve("held.npy"), heldOut);
    assertThat(Cli.run("build", "--out", idx.toString(), "--codes", trainF.toString()).code()).isZero();
    String i = idx.toString();

    Map<String, String> before = Files2.checksums(idx);
    Cli.Result refused = Cli.run("ood", "calibrate", "--index", i, "--codes", trainF.toString(), "-k", "1", "--check-overlap");
    assertThat(refused.code()).as(refused.describe()).isEqualTo(2);
    assertThat(refused.err()).as(refused.describe()).contains("200 of 200 rows have exactly the code of the index example with the same id");
    assertThat(Files2.checksums(idx)).isEqualTo(before);

    Cli.Result same = Cli.run("ood", "calibrate", "--index", i, "--codes", trainF.toString(), "-k", "1", "--format", "json");
    assertThat(same.code()).as(same.describe()).isZero();
    assertThat(same.err()).as(same.describe()).contains("warning: ").contains("200 of 200 rows").contains("--check-overlap");
    JsonNode sj = JSON.readTree(same.out());
    assertThat(sj.get("threshold").asDouble()).isZero();
    assertThat(sj.get("warnings")).hasSize(1);

    // in another order: every row on an indexed code, far more often than indexed codes are shared
    Cli.Result moved = Cli.run("ood", "calibrate", "--index", i, "--codes", shuffledF.toString(), "-k", "1", "--format", "json");
    assertThat(moved.code()).as(moved.describe()).isZero();
    assertThat(moved.err()).as(moved.describe()).contains("warning: ").contains("200 of 200 rows have exactly the code of an indexed example");
    assertThat(JSON.readTree(moved.out()).get("warnings")).hasSize(1);
    // an index holding every code twice: held-out rows could not be told from training rows by their codes
    // (every indexed code is shared), but a threshold of 0 still warns
    boolean[][] twice = new boolean[2 * train.length][];
    for (int r = 0; r < twice.length; r++) twice[r] = train[r / 2];
    Path twiceIdx = tmp.resolve("idx2");
    assertThat(Cli.run("build", "--out", twiceIdx.toString(), "--codes", Files2.bits(tmp.resolve("twice.npy"), twice).toString()).code()).isZero();
    Cli.Result zero = Cli.run("ood", "calibrate", "--index", twiceIdx.toString(), "--codes", shuffledF.toString(), "-k", "1", "--format", "json");
    assertThat(zero.code()).as(zero.describe()).isZero();
    assertThat(zero.err()).as(zero.describe()).contains("warning: the threshold is 0: 200 of 200 calibration inputs score 0");
    assertThat(JSON.readTree(zero.out()).get("warnings")).hasSize(1);

    Cli.Result held = Cli.run("ood", "calibrate", "--index", i, "--codes", heldF.toString(), "-k", "3", "--format", "json");
    assertThat(held.code()).as(held.describe()).isZero();
    assertThat(held.err()).as(held.describe()).doesNotContain("warning");
    JsonNode hj = JSON.readTree(held.out());
    assertThat(hj.get("threshold").asDouble()).isPositive();
    assertThat(hj.get("warnings")).isEmpty();
  }

  /**
   * The code score with k > 1 on an index built from codes (no kept magnitudes, so no copy check by
   * activations): training rows in another order score low (each finds itself at distance 0) but
   * the threshold is not 0, and they were calibrated on without a word. Now, when at least 99% of the
   * rows have exactly the code of some indexed example and that share lies far above the share of
   * indexed examples (drawn at random) whose code another one shares, they warn, and --check-overlap
   * refuses them. Held-out rows of the same clusters (some of them on an indexed code) warn of nothing.
   */
  @Test
  void shuffledTrainingCodesWarnUnderTheCodeScoreWithKAboveOne() throws Exception {
    boolean[][] train = rows(200, 0.05, 1), heldOut = rows(60, 0.05, 2);
    boolean[][] shuffled = new boolean[150][];
    for (int r = 0; r < shuffled.length; r++) shuffled[r] = train[(r * 37 + 11) % train.length]; // distinct rows: 37 and 200 coprime
    Path idx = tmp.resolve("kidx");
    Path trainF = Files2.bits(tmp.resolve("ktrain.npy"), train), shuffledF = Files2.bits(tmp.resolve("kshuf.npy"), shuffled);
    Path heldF = Files2.bits(tmp.resolve("kheld.npy"), heldOut);
    assertThat(Cli.run("build", "--out", idx.toString(), "--codes", trainF.toString()).code()).isZero();
    String i = idx.toString();
    int indexed = 0;
    for (boolean[] h : heldOut) for (boolean[] t : train) if (Arrays.equals(h, t)) { indexed++; break; }
    assertThat(indexed).as("some held-out rows land on an indexed code").isPositive();

    Map<String, String> before = Files2.checksums(idx);
    Cli.Result refused = Cli.run("ood", "calibrate", "--index", i, "--codes", shuffledF.toString(), "-k", "3", "--check-overlap");
    assertThat(refused.code()).as(refused.describe()).isEqualTo(2);
    assertThat(refused.err()).as(refused.describe()).contains("150 of 150 rows have exactly the code of an indexed example");
    assertThat(Files2.checksums(idx)).isEqualTo(before);

    Cli.Result moved = Cli.run("ood", "calibrate", "--index", i, "--codes", shuffledF.toString(), "-k", "3", "--format", "json");
    assertThat(moved.code()).as(moved.describe()).isZero();
    assertThat(moved.err()).as(moved.describe()).contains("warning: ").contains("150 of 150 rows have exactly the code")
        .contains("--check-overlap");
    JsonNode mj = JSON.readTree(moved.out());
    assertThat(mj.get("threshold").asDouble()).as("the threshold-0 warning cannot catch these").isPositive();
    assertThat(mj.get("warnings")).hasSize(1);

    Cli.Result held = Cli.run("ood", "calibrate", "--index", i, "--codes", heldF.toString(), "-k", "3", "--check-overlap", "--format", "json");
    assertThat(held.code()).as(held.describe()).isZero();
    assertThat(held.err()).as(held.describe()).doesNotContain("warning");
    assertThat(JSON.readTree(held.out()).get("warnings")).isEmpty();
  }

  /**
   * The refined score (an index of float activations with kept magnitudes): training rows score
   * about the 8-bit rounding of the kept magnitudes, not 0, so the threshold-0 warning cannot catch
   * them. Shuffled, or a part of them saved to a file of their own (no row i with the code of id i),
   * they were calibrated on with exit 0 and no warning, and the threshold (about 1e-6) flagged
   * every later input out. Now they warn, and --check-overlap refuses them; held-out rows warn of
   * nothing.
   */
  @Test
  void trainingRowsInAnotherOrderWarnUnderTheRefinedScore() throws Exception {
    float[][] train = floats(300, 0.1, 21), heldOut = floats(60, 0.1, 22);
    float[][] shuffled = new float[120][];
    for (int r = 0; r < shuffled.length; r++) shuffled[r] = train[(r * 37 + 11) % train.length]; // distinct rows: 37 and 300 coprime
    Path idx = tmp.resolve("ridx");
    Path trainF = Files2.floats(tmp.resolve("rtrain.npy"), train), shuffledF = Files2.floats(tmp.resolve("rshuf.npy"), shuffled);
    Path heldF = Files2.floats(tmp.resolve("rheld.npy"), heldOut);
    assertThat(Cli.run("build", "--out", idx.toString(), "--activations", trainF.toString()).code()).isZero();
    String i = idx.toString();

    Map<String, String> before = Files2.checksums(idx);
    Cli.Result refused = Cli.run("ood", "calibrate", "--index", i, "--activations", shuffledF.toString(), "--score", "refined", "--check-overlap");
    assertThat(refused.code()).as(refused.describe()).isEqualTo(2);
    assertThat(refused.err()).as(refused.describe()).contains("120 of 120 rows are copies of indexed examples");
    Cli.Result refusedByDefault = Cli.run("ood", "calibrate", "--index", i, "--activations", shuffledF.toString(), "--check-overlap"); // euclidean
    assertThat(refusedByDefault.code()).as(refusedByDefault.describe()).isEqualTo(2);
    assertThat(refusedByDefault.err()).as(refusedByDefault.describe()).contains("120 of 120 rows are copies of indexed examples");
    assertThat(Files2.checksums(idx)).isEqualTo(before);

    Cli.Result moved = Cli.run("ood", "calibrate", "--index", i, "--activations", shuffledF.toString(), "--score", "refined", "--format", "json");
    assertThat(moved.code()).as(moved.describe()).isZero();
    assertThat(moved.err()).as(moved.describe()).contains("warning: ").contains("120 of 120 rows are copies").contains("--check-overlap");
    assertThat(JSON.readTree(moved.out()).get("warnings")).hasSize(1);
    // the table showed such a threshold (about 1e-6) as 0.0000
    double threshold = JSON.readTree(moved.out()).get("threshold").asDouble();
    Cli.Result table = Cli.run("ood", "calibrate", "--index", i, "--activations", shuffledF.toString(), "--score", "refined");
    assertThat(threshold).isStrictlyBetween(0.0, 1e-3);
    assertThat(table.out()).as(table.describe()).contains("threshold: " + String.format(java.util.Locale.ROOT, "%.3e", threshold) + " ");

    Cli.Result held = Cli.run("ood", "calibrate", "--index", i, "--activations", heldF.toString(), "--score", "refined", "--format", "json");
    assertThat(held.code()).as(held.describe()).isZero();
    assertThat(held.err()).as(held.describe()).doesNotContain("warning");
    assertThat(JSON.readTree(held.out()).get("warnings")).isEmpty();
  }

  /**
   * A stored calibration whose score name or candidate count is damaged (written here through the
   * index writer, as a bug or a hand-edited store could leave it) is named as a damaged calibration
   * of the index, exit 2. The score name went through the parser of the --score option, so the
   * refusal read "--score: unknown score 'refind'" although no --score was typed. A calibration
   * stored before the default became euclidean keeps its score: {@code score=refined} stays the
   * cosine, a record without {@code score} the code score.
   */
  @Test
  void aDamagedStoredScoreNameIsNamedAsADamagedCalibration() throws Exception {
    Path idx = tmp.resolve("didx");
    Path trainF = Files2.floats(tmp.resolve("dtrain.npy"), floats(200, 0.1, 31)), calF = Files2.floats(tmp.resolve("dcal.npy"), floats(40, 0.1, 32));
    assertThat(Cli.run("build", "--out", idx.toString(), "--activations", trainF.toString()).code()).isZero();
    Cli.Result c = Cli.run("ood", "calibrate", "--index", idx.toString(), "--activations", calF.toString());
    assertThat(c.code()).as(c.describe()).isZero();
    assertThat(c.out()).as("the default with kept magnitudes").contains("euclidean score (100 Hamming candidates");
    String stored;
    try (io.actindex.index.store.IndexReader r = io.actindex.index.store.IndexReader.open(idx)) {
      stored = new String(r.attachment("ood.calibration"), java.nio.charset.StandardCharsets.UTF_8);
    }
    assertThat(stored).contains("score=euclidean\n").contains("candidates=100\n");
    String[][] older = {{"score=euclidean\n", "score=refined\n", "score: refined cosine k-th distance (k=1, among 100 Hamming candidates"},
        {"score=euclidean\ncandidates=100\n", "", "score: code k-th distance (k=1, layers"}};
    for (String[] o : older) {
      String old = stored.replace(o[0], o[1]);
      assertThat(old).isNotEqualTo(stored);
      try (io.actindex.index.store.IndexWriter w = io.actindex.index.store.IndexWriter.open(idx)) {
        w.putAttachment("ood.calibration", old.getBytes(java.nio.charset.StandardCharsets.UTF_8));
      }
      Cli.Result r = Cli.run("ood", "score", "--index", idx.toString(), "--activations", calF.toString(), "--rows", "0:1");
      assertThat(r.code()).as(r.describe()).isZero();
      assertThat(r.out()).as(r.describe()).contains(o[2]);
    }
    String[][] damages = {{"score=euclidean\n", "score=refind\n", "unknown score 'refind'"}, {"candidates=100\n", "candidates=-3\n", "candidates"},
        {"candidates=100\n", "candidates=x\n", "candidates"}};
    for (String[] d : damages) {
      try (io.actindex.index.store.IndexWriter w = io.actindex.index.store.IndexWriter.open(idx)) {
        w.putAttachment("ood.calibration", stored.replace(d[0], d[1]).getBytes(java.nio.charset.StandardCharsets.UTF_8));
      }
      for (String[] args : new String[][] {{"ood", "score", "--index", idx.toString(), "--activations", calF.toString()},
          {"report", "--index", idx.toString(), "--out", tmp.resolve("d.html").toString()}}) {
        Cli.Result r = Cli.run(args);
        assertThat(r.code()).as(r.describe()).isEqualTo(2);
        assertThat(r.err()).as(r.describe()).contains(idx + " attachment ood.calibration: damaged calibration").contains(d[2])
            .doesNotContain("--score");
        assertThat(r.err().strip().lines().count()).as(r.describe()).isEqualTo(1);
      }
    }
  }

  /**
   * ood eval without --kind on an index built from a model takes each file as compare does: the
   * model's inputs, or its hidden activations when the width fits those and not the inputs. Hidden
   * activations were read as inputs ("rows have 4 values but the model ... takes 3", exit 2) with no
   * word of --kind, while compare on the same index took them.
   */
  @Test
  void evalOnAModelsIndexTakesHiddenActivationsByTheirWidth() {
    SplittableRandom r = new SplittableRandom(403);
    Path idx = tmp.resolve("midx");
    String train = Files2.floats(tmp.resolve("min.npy"), SourcesEndToEndTest.activations(60, 3, r)).toString();
    String model = CompareEndToEndTest.mlp(tmp.resolve("m.safetensors"), 3, r).toString();
    assertThat(Cli.run("build", "--out", idx.toString(), "--model", model, "--inputs", train).code()).isZero();
    String cal = Files2.floats(tmp.resolve("mcal.npy"), SourcesEndToEndTest.activations(40, 3, r)).toString();
    Cli.Result c = Cli.run("ood", "calibrate", "--index", idx.toString(), "--inputs", cal);
    assertThat(c.code()).as(c.describe()).isZero();
    String ha = Files2.floats(tmp.resolve("ha.npy"), SourcesEndToEndTest.activations(12, 4, r)).toString();
    String hb = Files2.floats(tmp.resolve("hb.npy"), SourcesEndToEndTest.activations(12, 4, r)).toString();
    String[] eval = {"ood", "eval", "--index", idx.toString(), "--in", ha, "--out", hb, "--format", "json"};
    Cli.Result inferred = Cli.run(eval);
    assertThat(inferred.code()).as(inferred.describe()).isZero();
    String[] told = Arrays.copyOf(eval, eval.length + 2);
    told[eval.length] = "--kind";
    told[eval.length + 1] = "activations";
    assertThat(inferred.out()).isEqualTo(Cli.run(told).out());
    // inputs are still inputs
    String ia = Files2.floats(tmp.resolve("ia.npy"), SourcesEndToEndTest.activations(12, 3, r)).toString();
    Cli.Result inputs = Cli.run("ood", "eval", "--index", idx.toString(), "--in", ia, "--out", ia, "--format", "json");
    assertThat(inputs.code()).as(inputs.describe()).isZero();
    assertThat(inputs.out()).isEqualTo(Cli.run("ood", "eval", "--index", idx.toString(), "--in", ia, "--out", ia, "--format", "json", "--kind", "inputs").out());
  }

  /**
   * export-edge ends its JSON with the range guard's bounds (one per code layer) and its CSV with
   * range_guard; without one (no --with-model, or an index that keeps no magnitudes) the bounds are
   * null and one note on stderr says why and what to do.
   */
  @Test
  void exportEdgeTellsItsRangeGuard() throws Exception {
    SplittableRandom r = new SplittableRandom(77);
    String train = Files2.floats(tmp.resolve("gin.npy"), SourcesEndToEndTest.activations(80, 3, r)).toString();
    String cal = Files2.floats(tmp.resolve("gcal.npy"), SourcesEndToEndTest.activations(40, 3, r)).toString();
    String model = CompareEndToEndTest.mlp(tmp.resolve("g.safetensors"), 3, r).toString();
    for (String mags : List.of("8", "off")) {
      String i = tmp.resolve("g" + mags).toString();
      assertThat(Cli.run("build", "--out", i, "--model", model, "--inputs", train, "--magnitudes", mags).code()).isZero();
      assertThat(Cli.run("ood", "calibrate", "--index", i, "--inputs", cal, "--score", "code").code()).isZero();
      for (boolean withModel : List.of(true, false)) {
        String out = tmp.resolve("g" + mags + withModel + ".edge").toString();
        Cli.Result x = withModel ? Cli.run("export-edge", "--index", i, "--out", out, "--with-model", "--format", "json")
            : Cli.run("export-edge", "--index", i, "--out", out, "--format", "json");
        assertThat(x.code()).as(x.describe()).isZero();
        JsonNode j = JSON.readTree(x.out());
        List<String> names = new java.util.ArrayList<>();
        j.fieldNames().forEachRemaining(names::add);
        assertThat(names.getLast()).isEqualTo("range_bounds");
        boolean guard = withModel && mags.equals("8");
        if (guard) {
          assertThat(j.get("range_bounds").size()).as("one bound per code layer").isEqualTo(1);
          assertThat(j.get("range_bounds").get(0).asDouble()).isPositive();
          assertThat(x.err()).doesNotContain("range guard");
          Cli.Result csv = Cli.run("export-edge", "--index", i, "--out", out, "--with-model", "--format", "csv");
          assertThat(csv.out().lines().toList()).startsWith("bundle,bytes,unique_codes,examples,bytes_per_example,with_model,range_guard");
          assertThat(csv.out().lines().skip(1).findFirst().orElse("")).endsWith(",true,true");
        } else {
          assertThat(j.get("range_bounds").isNull()).isTrue();
          assertThat(x.err().lines().filter(l -> l.contains("range guard")).toList()).as(x.describe()).singleElement().asString()
              .startsWith("note: the bundle has no range guard").contains(withModel ? "keeps no magnitudes" : "export with --with-model")
              .doesNotContain("`");
        }
      }
    }
  }

  /**
   * An index built with its code layers out of the model's order ({@code --layers 2,0}) exports a
   * bundle with the model like any other (it was refused, exit 2, and before that an internal error):
   * the bundle encodes each training input to the code of the index built in the model's order
   * ({@code --layers 0,2}) with the two layers' bits swapped, so both find every training input at
   * distance 0. The bit placement itself is checked against the index's codes and the C source in
   * query's ReorderedLayersEdgeTest.
   */
  @Test
  void exportWithModelFollowsTheIndexsLayerOrder() throws Exception {
    SplittableRandom r = new SplittableRandom(78);
    Map<String, io.actindex.encode.io.SafetensorsWriter.Tensor> t = new java.util.LinkedHashMap<>();
    long[][] shapes = {{5, 3}, {4, 5}, {2, 4}};
    for (int l = 0; l < shapes.length; l++) {
      t.put(2 * l + ".weight", new io.actindex.encode.io.SafetensorsWriter.Tensor(shapes[l], r.doubles(shapes[l][0] * shapes[l][1], -1, 1).toArray()));
      t.put(2 * l + ".bias", new io.actindex.encode.io.SafetensorsWriter.Tensor(new long[] {shapes[l][0]}, r.doubles(shapes[l][0], -0.5, 0.5).toArray()));
    }
    Path model = tmp.resolve("three.safetensors");
    io.actindex.encode.io.SafetensorsWriter.write(model, t, Map.of());
    float[][] rows = SourcesEndToEndTest.activations(80, 3, r);
    String train = Files2.floats(tmp.resolve("tin.npy"), rows).toString();
    String cal = Files2.floats(tmp.resolve("tcal.npy"), SourcesEndToEndTest.activations(40, 3, r)).toString();
    List<io.actindex.edge.EdgeBundle> bundles = new ArrayList<>();
    for (String layers : List.of("2,0", "0,2")) {
      Path idx = tmp.resolve("t" + layers.replace(',', '_'));
      String i = idx.toString(), out = tmp.resolve("t" + layers.replace(',', '_') + ".edge").toString();
      assertThat(Cli.run("build", "--out", i, "--model", model.toString(), "--inputs", train, "--layers", layers).code()).isZero();
      assertThat(Cli.run("ood", "calibrate", "--index", i, "--inputs", cal, "--score", "code", "-k", "1").code()).isZero();
      Cli.Result x = Cli.run("export-edge", "--index", i, "--out", out, "--with-model");
      assertThat(x.code()).as(x.describe()).isZero();
      bundles.add(io.actindex.edge.BundleFormat.read(Path.of(out)));
    }
    int swapped = 0;
    for (float[] row : rows) {
      double[] in = new double[row.length];
      for (int j = 0; j < row.length; j++) in[j] = row[j];
      long rev = bundles.get(0).encode(in)[0], fwd = bundles.get(1).encode(in)[0]; // 2,0: layer 2's 4 bits, then layer 0's 5
      assertThat(((rev >>> 4) & 0x1F) | ((rev & 0xF) << 5)).isEqualTo(fwd);
      if (rev != fwd) swapped++;
      for (io.actindex.edge.EdgeBundle b : bundles) assertThat(b.score(b.encode(in)).kth()).as("a training input is at distance 0").isZero();
    }
    assertThat(swapped).as("the two orders differ on some rows").isPositive();
  }

  /**
   * {@code --threads}: calibrate, score (full and decision-only) and eval print the same bytes on 1
   * and 3 threads and by default (one per core, shown in the help).
   */
  @Test
  void threadsGiveTheSameOutput() throws Exception {
    Path idx = tmp.resolve("tidx");
    Path trainF = Files2.floats(tmp.resolve("ttrain.npy"), floats(300, 0.1, 11)), calF = Files2.floats(tmp.resolve("tcal.npy"), floats(60, 0.1, 12));
    Path inF = Files2.floats(tmp.resolve("tin.npy"), floats(40, 0.1, 13)), outF = Files2.floats(tmp.resolve("tout.npy"), floats(40, 0.6, 14));
    assertThat(Cli.run("build", "--out", idx.toString(), "--activations", trainF.toString()).code()).isZero();
    String i = idx.toString();
    for (String score : List.of("refined", "code")) {
      String[][] commands = {
          {"ood", "calibrate", "--index", i, "--activations", calF.toString(), "-k", "3", "--score", score, "--format", "json"},
          {"ood", "score", "--index", i, "--activations", inF.toString(), "--format", "json"},
          {"ood", "eval", "--index", i, "--in", inF.toString(), "--out", outF.toString(), "--in-floats", inF.toString(), "--out-floats",
              outF.toString(), "--train-floats", trainF.toString(), "--format", "json"},
      };
      for (String[] args : commands) {
        List<String> outputs = new java.util.ArrayList<>();
        for (String[] threads : List.of(new String[] {"--threads", "1"}, new String[] {"--threads", "3"}, new String[0])) {
          String[] all = java.util.stream.Stream.concat(Arrays.stream(args), Arrays.stream(threads)).toArray(String[]::new);
          Cli.Result r = Cli.run(all);
          assertThat(r.code()).as(r.describe()).isZero();
          outputs.add(r.out());
        }
        assertThat(outputs).as(String.join(" ", args)).containsOnly(outputs.get(0));
      }
    }
    Cli.Result d1 = Cli.run("ood", "score", "--index", i, "--activations", outF.toString(), "--decision-only", "--threads", "1", "--format", "csv");
    Cli.Result d3 = Cli.run("ood", "score", "--index", i, "--activations", outF.toString(), "--decision-only", "--threads", "3", "--format", "csv");
    assertThat(d1.code()).as(d1.describe()).isZero();
    assertThat(d3.out()).isEqualTo(d1.out()).contains(",out,");
    // the code calibration is stored now: --train-floats with one row per id gives the refined score; with another row count the
    // float score still runs on all rows and the missing refined score is said, on stderr and in the JSON
    for (Path train : List.of(trainF, calF)) {
      Cli.Result e = Cli.run("ood", "eval", "--index", i, "--in", inF.toString(), "--out", outF.toString(), "--in-floats", inF.toString(),
          "--out-floats", outF.toString(), "--train-floats", train.toString(), "--format", "json");
      assertThat(e.code()).as(e.describe()).isZero();
      JsonNode j = JSON.readTree(e.out());
      boolean matches = train.equals(trainF);
      assertThat(j.get("scores").findValuesAsText("name")).as(e.describe()).contains("code", "float");
      assertThat(j.get("scores").findValuesAsText("name").contains("refined")).as(e.describe()).isEqualTo(matches);
      assertThat(j.get("warnings").size()).as(e.describe()).isEqualTo(matches ? 0 : 1);
      if (!matches) {
        assertThat(j.get("warnings").get(0).asText()).contains(calF + " has 60 rows but the index has 300 ids");
        assertThat(e.err()).contains("warning: no refined score: " + calF);
      }
    }
    for (String sub : List.of("calibrate", "score", "eval"))
      assertThat(Cli.run("ood", sub, "--help").out().replaceAll("\\s+", " ")).as(sub).contains("--threads=N Worker threads").contains("Default: 0 (0 = one per core)");
  }

  /** Relu-like float rows: each row is one of 6 non-negative prototypes plus noise, clipped at 0. */
  static float[][] floats(int n, double noise, long seed) {
    SplittableRandom proto = new SplittableRandom(98), rnd = new SplittableRandom(seed);
    float[][] p = new float[6][BITS];
    for (float[] r : p) for (int j = 0; j < BITS; j++) r[j] = proto.nextBoolean() ? (float) proto.nextDouble(0.2, 2) : 0;
    float[][] out = new float[n][BITS];
    for (int i = 0; i < n; i++) {
      float[] b = p[rnd.nextInt(6)];
      for (int j = 0; j < BITS; j++) out[i][j] = (float) Math.max(0, b[j] + noise * rnd.nextGaussian());
    }
    return out;
  }

  @Test
  void refinedScoreFromKeptMagnitudes() throws Exception {
    Path idx = tmp.resolve("fidx");
    Path trainF = Files2.floats(tmp.resolve("ftrain.npy"), floats(300, 0.1, 1)), calF = Files2.floats(tmp.resolve("fcal.npy"), floats(60, 0.1, 2));
    Path qF = Files2.floats(tmp.resolve("fq.npy"), floats(20, 0.5, 3));
    assertThat(Cli.run("build", "--out", idx.toString(), "--activations", trainF.toString()).code()).isZero();
    Cli.Result c = Cli.run("ood", "calibrate", "--index", idx.toString(), "--activations", calF.toString(), "-k", "2", "--score", "refined",
        "--format", "json");
    assertThat(c.code()).as(c.describe()).isZero();
    JsonNode cj = JSON.readTree(c.out());
    assertThat(cj.get("score").asText()).isEqualTo("refined");
    assertThat(cj.get("candidates").asInt()).isEqualTo(100);
    // the report's OOD section shows the numbers ood calibrate printed (60 scores: the nearest-rank
    // median is the 30th, not the 31st) and names the refined score, a cosine distance, not bits
    Path page = tmp.resolve("r.html");
    Cli.Result rep = Cli.run("report", "--index", idx.toString(), "--out", page.toString());
    assertThat(rep.code()).as(rep.describe()).isZero();
    String html = Files.readString(page);
    int start = html.indexOf("<h2 id=\"ood\""), end = html.indexOf("<h2", start + 1);
    assertThat(start).as("the page has an ood section").isNotNegative();
    String ood = html.substring(start, end < 0 ? html.length() : end);
    JsonNode sc = cj.get("scores");
    for (String[] row : new String[][] {{"smallest score", "min"}, {"median score", "p50"}, {"largest score", "max"}})
      assertThat(ood).contains("<td class=\"l\">" + row[0] + "</td><td>" + HtmlPage.num(sc.get(row[1]).asDouble()) + "</td>");
    assertThat(ood).contains("<td class=\"l\">threshold (flag out above)</td><td>" + HtmlPage.num(cj.get("threshold").asDouble()) + "</td>")
        .contains("refined cosine k-th distance (k = 2, among 100 Hamming candidates").contains("score (cosine distance)").doesNotContain("(bits)");
    Cli.Result s = Cli.run("ood", "score", "--index", idx.toString(), "--activations", qF.toString(), "--format", "json");
    assertThat(s.code()).as(s.describe()).isZero();
    assertThat(JSON.readTree(s.out()).get("score_name").asText()).isEqualTo("refined cosine k-th distance");
    Cli.Result mean = Cli.run("ood", "calibrate", "--index", idx.toString(), "--activations", calF.toString(), "-k", "2", "--statistic", "mean",
        "--score", "refined");
    assertThat(mean.code()).as(mean.describe()).isZero();
    Cli.Result table = Cli.run("ood", "score", "--index", idx.toString(), "--activations", qF.toString());
    assertThat(table.out()).startsWith("score: refined cosine mean distance (k=2, among 100 Hamming candidates, layers all)\n");
    Cli.Result csvMean = Cli.run("ood", "score", "--index", idx.toString(), "--activations", qF.toString(), "--format", "csv");
    assertThat(csvMean.out().lines().skip(1)).hasSize(20).allMatch(l -> l.endsWith(",refined cosine mean distance"));
    for (JsonNode r : JSON.readTree(s.out()).get("results"))
      assertThat(r.get("decision").asText()).isEqualTo(r.get("score").asDouble() > cj.get("threshold").asDouble() ? "out" : "in");
    Map<String, String> before = Files2.checksums(idx);
    Path codesF = Files2.bits(tmp.resolve("fq-codes.npy"), rows(20, 0.05, 3));
    String i = idx.toString();
    String[][] bad = {
        {"ood", "score", "--index", i, "--activations", qF.toString(), "--score", "code"},
        {"ood", "eval", "--index", i, "--in", calF.toString(), "--out", qF.toString(), "--score", "code"},
        {"ood", "score", "--index", i, "--codes", codesF.toString()},
        {"ood", "score", "--index", i, "--activations", qF.toString(), "--decision-only"},
        {"export-edge", "--index", i, "--out", tmp.resolve("f.edge").toString()},
        {"ood", "score", "--index", i, "--activations", qF.toString(), "--score", "fancy"},
    };
    String[] expect = {"uses the refined score", "uses the refined score", "--score code", "--decision-only", "uses the refined score", "--score"};
    for (int t = 0; t < bad.length; t++) {
      Cli.Result r = Cli.run(bad[t]);
      assertThat(r.code()).as(r.describe()).isEqualTo(2);
      assertThat(r.err().lines().filter(l -> !l.isBlank()).toList()).as(r.describe()).hasSize(1).first().asString().contains(expect[t]);
    }
    assertThat(Files2.checksums(idx)).isEqualTo(before);
    assertThat(tmp.resolve("f.edge")).doesNotExist();
    Cli.Result e = Cli.run("ood", "eval", "--index", i, "--in", calF.toString(), "--out", qF.toString(), "--format", "json");
    assertThat(e.code()).as(e.describe()).isZero();
    assertThat(JSON.readTree(e.out()).get("scores").findValuesAsText("name")).contains("code", "refined");
    // float rows that do not pair with the --in/--out rows: refused naming both files and counts
    Path fewer = Files2.floats(tmp.resolve("fewer.npy"), floats(59, 0.1, 2));
    Cli.Result in = Cli.run("ood", "eval", "--index", i, "--in", calF.toString(), "--out", qF.toString(), "--in-floats", fewer.toString(),
        "--out-floats", qF.toString(), "--train-floats", trainF.toString(), "--score", "refined");
    assertThat(in.code()).as(in.describe()).isEqualTo(2);
    assertThat(in.err().strip()).as(in.describe()).isEqualTo("actindex ood eval: " + fewer + ": 59 rows of floats, but --in " + calF
        + " has 60; --in-floats must hold the same inputs in the same order");
    Cli.Result out = Cli.run("ood", "eval", "--index", i, "--in", calF.toString(), "--out", qF.toString(), "--in-floats", calF.toString(),
        "--out-floats", fewer.toString(), "--train-floats", trainF.toString());
    assertThat(out.code()).as(out.describe()).isEqualTo(2);
    assertThat(out.err().strip()).as(out.describe()).startsWith("actindex ood eval: " + fewer + ": 59 rows of floats, but --out " + qF + " has 20");
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  /**
   * The euclidean score through the command line: calibrate, score and eval (listed last, after the
   * cosine refined score, whose numbers it does not change); a different --score, the decision-only
   * path and the edge bundle refused naming it; an index without kept magnitudes refused naming the index.
   */
  @Test
  void euclideanScoreFromKeptMagnitudes() throws Exception {
    Path idx = tmp.resolve("eidx");
    Path trainF = Files2.floats(tmp.resolve("etrain.npy"), floats(300, 0.1, 1)), calF = Files2.floats(tmp.resolve("ecal.npy"), floats(60, 0.1, 2));
    Path qF = Files2.floats(tmp.resolve("eq.npy"), floats(20, 0.5, 3));
    String i = idx.toString();
    assertThat(Cli.run("build", "--out", i, "--activations", trainF.toString()).code()).isZero();
    Cli.Result cosine = Cli.run("ood", "calibrate", "--index", i, "--activations", calF.toString(), "-k", "2", "--candidates", "30", "--score", "refined");
    assertThat(cosine.code()).as(cosine.describe()).isZero();
    Cli.Result cosineEval = Cli.run("ood", "eval", "--index", i, "--in", calF.toString(), "--out", qF.toString(), "--format", "json");
    assertThat(cosineEval.code()).as(cosineEval.describe()).isZero();
    Cli.Result c = Cli.run("ood", "calibrate", "--index", i, "--activations", calF.toString(), "-k", "2", "--candidates", "30", "--score", "euclidean",
        "--format", "json");
    assertThat(c.code()).as(c.describe()).isZero();
    JsonNode cj = JSON.readTree(c.out());
    assertThat(cj.get("score").asText()).isEqualTo("euclidean");
    // the default on an index that keeps magnitudes: the same calibration without --score
    Cli.Result byDefault = Cli.run("ood", "calibrate", "--index", i, "--activations", calF.toString(), "-k", "2", "--candidates", "30", "--format", "json");
    assertThat(byDefault.code()).as(byDefault.describe()).isZero();
    assertThat(byDefault.out()).isEqualTo(c.out());
    assertThat(cj.get("candidates").asInt()).isEqualTo(30);
    Path page = tmp.resolve("e.html");
    Cli.Result rep = Cli.run("report", "--index", i, "--out", page.toString());
    assertThat(rep.code()).as(rep.describe()).isZero();
    assertThat(Files.readString(page)).contains("refined euclidean k-th distance (k = 2, among 30 Hamming candidates")
        .contains("score (Euclidean distance)").doesNotContain("score (cosine distance)");
    Cli.Result s = Cli.run("ood", "score", "--index", i, "--activations", qF.toString(), "--format", "json");
    assertThat(s.code()).as(s.describe()).isZero();
    JsonNode sj = JSON.readTree(s.out());
    assertThat(sj.get("score_name").asText()).isEqualTo("refined euclidean k-th distance");
    for (JsonNode r : sj.get("results"))
      assertThat(r.get("decision").asText()).isEqualTo(r.get("score").asDouble() > cj.get("threshold").asDouble() ? "out" : "in");
    Cli.Result table = Cli.run("ood", "score", "--index", i, "--activations", qF.toString());
    assertThat(table.out()).startsWith("score: refined euclidean k-th distance (k=2, among 30 Hamming candidates, layers all)\n");
    Cli.Result e = Cli.run("ood", "eval", "--index", i, "--in", calF.toString(), "--out", qF.toString(), "--format", "json");
    assertThat(e.code()).as(e.describe()).isZero();
    List<String> names = JSON.readTree(e.out()).get("scores").findValuesAsText("name");
    assertThat(names).containsExactly("code", "refined", "euclidean");
    // the same k, statistic and candidates: the cosine refined score's numbers are those of the cosine calibration's eval
    assertThat(JSON.readTree(e.out()).get("scores").get(1)).isEqualTo(JSON.readTree(cosineEval.out()).get("scores").get(1));
    assertThat(JSON.readTree(cosineEval.out()).get("scores").findValuesAsText("name")).containsExactly("code", "refined", "euclidean");
    Cli.Result csv = Cli.run("ood", "eval", "--index", i, "--in", calF.toString(), "--out", qF.toString(), "--format", "csv");
    assertThat(csv.out().lines().skip(3).findFirst().orElseThrow()).startsWith("euclidean,,,,");
    Map<String, String> before = Files2.checksums(idx);
    String[][] bad = {
        {"ood", "score", "--index", i, "--activations", qF.toString(), "--score", "refined"},
        {"ood", "eval", "--index", i, "--in", calF.toString(), "--out", qF.toString(), "--score", "code"},
        {"ood", "score", "--index", i, "--activations", qF.toString(), "--decision-only"},
        {"export-edge", "--index", i, "--out", tmp.resolve("e.edge").toString()},
    };
    for (String[] args : bad) {
      Cli.Result r = Cli.run(args);
      assertThat(r.code()).as(r.describe()).isEqualTo(2);
      assertThat(r.err().lines().filter(l -> !l.isBlank()).toList()).as(r.describe()).hasSize(1).first().asString()
          .contains("uses the euclidean score");
    }
    assertThat(Files2.checksums(idx)).isEqualTo(before);
    assertThat(tmp.resolve("e.edge")).doesNotExist();
    // an index built from codes keeps no magnitudes: refused, naming the index
    Path codesIdx = tmp.resolve("ecodes");
    assertThat(Cli.run("build", "--out", codesIdx.toString(), "--codes", Files2.bits(tmp.resolve("etrain-codes.npy"), rows(300, 0.05, 1)).toString())
        .code()).isZero();
    Map<String, String> codesBefore = Files2.checksums(codesIdx);
    Cli.Result none = Cli.run("ood", "calibrate", "--index", codesIdx.toString(), "--activations", calF.toString(), "--score", "euclidean");
    assertThat(none.code()).as(none.describe()).isEqualTo(2);
    assertThat(none.err().lines().filter(l -> !l.isBlank()).toList()).as(none.describe()).hasSize(1).first().asString()
        .contains("index " + codesIdx + " keeps no magnitudes");
    assertThat(Files2.checksums(codesIdx)).isEqualTo(codesBefore);
  }
}
