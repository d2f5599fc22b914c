package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.format.JsonWriterTest;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code build} keeping magnitudes, {@code info}, {@code nearest --refine} and {@code fidelity}
 * through the command line. The refined JSON is compared with a computation in the test: Hamming
 * distance on the bits {@code > 0}, candidates = rows within the C-th smallest distance, each
 * example's activations quantised by the documented rule (per unit: offset = minimum, step =
 * (max - min) / 255, q = round((v - offset) / step), value = offset + q * step, in float), cosine
 * distance, ties by Hamming distance then id. Bad input: exit 2, one line, index unchanged.
 */
class RefineFidelityEndToEndTest {
  @TempDir Path tmp;
  Path idx, acts, queries, meta;
  float[][] train, q;

  @BeforeEach
  void build() {
    SplittableRandom rnd = new SplittableRandom(11);
    train = SourcesEndToEndTest.activations(150, 12, rnd);
    q = SourcesEndToEndTest.activations(4, 12, rnd);
    acts = Files2.floats(tmp.resolve("acts.npy"), train);
    queries = Files2.floats(tmp.resolve("q.npy"), q);
    List<String> lines = new ArrayList<>(List.of("key,label"));
    for (int i = 0; i < train.length; i++) lines.add("e" + i + "," + (train[i][0] > 0 ? "hot" : "cold"));
    meta = Files2.text(tmp.resolve("meta.csv"), lines);
    idx = tmp.resolve("idx");
    Cli.Result r = Cli.run("build", "--out", idx.toString(), "--activations", acts.toString(), "--meta", meta.toString(),
        "--format", "json");
    assertThat(r.code()).as(r.describe()).isZero();
    JsonNode built = json(r);
    assertThat(built.get("magnitudes").get("bits").asInt()).isEqualTo(8);
    assertThat(built.get("magnitudes").get("bytes_per_example").asInt()).isEqualTo(12);
  }

  private static JsonNode json(Cli.Result r) {
    try {
      return JsonWriterTest.STRICT.readTree(r.out());
    } catch (Exception e) {
      throw new AssertionError(r.describe(), e);
    }
  }

  @Test
  void refinedNeighboursMatchTheTestsComputation() {
    int k = 3, c = 7;
    Cli.Result r = Cli.run("nearest", "--index", idx.toString(), "--activations", queries.toString(), "-k", "" + k,
        "--refine", "cosine", "--candidates", "" + c, "--format", "json");
    assertThat(r.code()).as(r.describe()).isZero();
    JsonNode doc = json(r);
    assertThat(doc.get("refine").get("metric").asText()).isEqualTo("cosine");
    assertThat(doc.get("refine").get("order").asText()).contains("re-ranking");
    float[][] deq = dequantised(train);
    for (int i = 0; i < q.length; i++) {
      int qi = i;
      List<Integer> ids = new ArrayList<>();
      for (int id = 0; id < train.length; id++) ids.add(id);
      int[] ham = ids.stream().mapToInt(id -> hamming(q[qi], train[id])).toArray();
      ids.sort(Comparator.<Integer>comparingInt(id -> ham[id]).thenComparingInt(id -> id));
      int dc = ham[ids.get(c - 1)];
      List<Integer> cands = new ArrayList<>(ids.stream().filter(id -> ham[id] <= dc).toList());
      cands.sort(Comparator.<Integer>comparingDouble(id -> cosine(q[qi], deq[id])).thenComparingInt(id -> ham[id])
          .thenComparingInt(id -> id));
      JsonNode res = doc.get("results").get(i);
      assertThat(res.get("candidates").asInt()).isEqualTo(cands.size());
      assertThat(res.get("hamming_radius").asInt()).isEqualTo(dc);
      JsonNode nbs = res.get("neighbors");
      assertThat(nbs.size()).isEqualTo(k);
      for (int h = 0; h < k; h++) {
        int id = cands.get(h);
        assertThat(nbs.get(h).get("id").asInt()).as(r.describe()).isEqualTo(id);
        assertThat(nbs.get(h).get("distance").asInt()).isEqualTo(ham[id]);
        assertThat(nbs.get(h).get("refined_distance").asDouble()).isCloseTo(cosine(q[qi], deq[id]), org.assertj.core.api.Assertions.within(1e-6));
      }
    }
    // table and CSV say the order is a re-ranking and give both distances
    Cli.Result table = Cli.run("nearest", "--index", idx.toString(), "--activations", queries.toString(), "--rows", "0", "-k", "2",
        "--refine", "euclidean");
    assertThat(table.code()).as(table.describe()).isZero();
    assertThat(table.out()).contains("re-ranked by euclidean distance").contains("hamming");
    Cli.Result csv = Cli.run("nearest", "--index", idx.toString(), "--activations", queries.toString(), "-k", "2",
        "--refine", "cosine", "--format", "csv");
    assertThat(csv.out().lines().findFirst().orElseThrow()).startsWith("query,rank,id,key,distance,refined_distance");
    // --refine with no metric (before another option, or last) is cosine: the same output as typing it
    Cli.Result bare = Cli.run("nearest", "--index", idx.toString(), "--activations", queries.toString(), "--refine", "-k", "2",
        "--format", "csv");
    assertThat(bare.code()).as(bare.describe()).isZero();
    assertThat(bare.out()).isEqualTo(csv.out());
    Cli.Result last = Cli.run("nearest", "--index", idx.toString(), "--activations", queries.toString(), "-k", "2", "--format", "csv",
        "--refine");
    assertThat(last.out()).as(last.describe()).isEqualTo(csv.out());
    Cli.Result wrong = Cli.run("nearest", "--index", idx.toString(), "--activations", queries.toString(), "--refine", "manhattan");
    assertThat(wrong.code()).as(wrong.describe()).isEqualTo(2);
    assertThat(wrong.err()).as(wrong.describe()).contains("manhattan");
  }

  @Test
  void infoAndFidelityReport() {
    Cli.Result info = Cli.run("info", "--index", idx.toString(), "--format", "json");
    assertThat(json(info).get("magnitudes").get("bits").asInt()).isEqualTo(8);
    assertThat(Cli.run("info", "--index", idx.toString()).out()).contains("magnitudes: 8 bits per unit, 12 bytes per example");

    Cli.Result f = Cli.run("fidelity", "--index", idx.toString(), "--queries", "50", "-k", "3", "--format", "json");
    assertThat(f.code()).as(f.describe()).isZero();
    JsonNode doc = json(f);
    assertThat(doc.get("queries").asInt()).isEqualTo(50);
    assertThat(doc.get("examples").asInt()).isEqualTo(150);
    assertThat(doc.get("accuracy").get("labeled").asInt()).isEqualTo(50);
    assertThat(doc.get("accuracy").get("refined").isNumber()).isTrue();
    assertThat(doc.get("accuracy").get("euclidean_inputs").isNull()).isTrue();
    assertThat(doc.get("spearman").asDouble()).isBetween(-1.0, 1.0);
    assertThat(doc.get("verdict").asText()).contains("Measured on this data only");

    Cli.Result fa = Cli.run("fidelity", "--activations", acts.toString(), "--meta", meta.toString(), "-k", "1");
    assertThat(fa.code()).as(fa.describe()).isZero();
    assertThat(fa.out()).contains("accuracy refined").contains("knn overlap");
    Cli.Result csv = Cli.run("fidelity", "--activations", acts.toString(), "--format", "csv", "--queries", "20");
    assertThat(csv.out()).startsWith("measure,value").contains("spearman,");
  }

  /**
   * Partly labelled examples: a labelled query whose k nearest all lack a label counts as wrong in
   * every accuracy; fidelity counts those queries per metric (the Hamming count checked against a
   * brute-force count here), prints a note on stderr and adds the counts at the end of the JSON
   * object and of the CSV rows. Fully labelled (the fixture's index): zeros and no note.
   */
  /** `--threads` defaults to one per core; 1, 3 and the default give the same document (13 queries: blocks of 8 and a short one). */
  @Test
  void fidelityThreadsGiveTheSameOutput() {
    List<String> outputs = new ArrayList<>();
    for (List<String> threads : List.of(List.of("--threads", "1"), List.of("--threads", "3"), List.<String>of())) {
      List<String> args = new ArrayList<>(List.of("fidelity", "--index", idx.toString(), "--queries", "13", "-k", "3", "--format", "json"));
      args.addAll(threads);
      Cli.Result r = Cli.run(args.toArray(String[]::new));
      assertThat(r.code()).as(r.describe()).isZero();
      outputs.add(r.out());
    }
    assertThat(outputs).containsOnly(outputs.get(0));
  }

  @Test
  void queriesWithoutALabelledNeighbourAreCountedAndNoted() {
    int k = 2;
    List<String> lines = new ArrayList<>(List.of("key,label"));
    String[] labels = new String[train.length];
    for (int i = 0; i < train.length; i++) {
      labels[i] = i % 5 < 2 ? (train[i][0] > 0 ? "hot" : "cold") : null; // 2 rows in 5 labelled
      lines.add("e" + i + "," + (labels[i] == null ? "" : labels[i]));
    }
    Path partMeta = Files2.text(tmp.resolve("part.csv"), lines);
    Path part = tmp.resolve("part");
    Cli.Result b = Cli.run("build", "--out", part.toString(), "--activations", acts.toString(), "--meta", partMeta.toString());
    assertThat(b.code()).as(b.describe()).isZero();
    int labelled = 0, none = 0;
    for (int q = 0; q < train.length; q++) {
      if (labels[q] == null) continue;
      labelled++;
      int qq = q;
      List<Integer> byHam = new ArrayList<>();
      for (int j = 0; j < train.length; j++) if (j != q) byHam.add(j);
      byHam.sort(Comparator.<Integer>comparingInt(j -> hamming(train[qq], train[j])).thenComparingInt(j -> j));
      none += byHam.subList(0, k).stream().allMatch(j -> labels[j] == null) ? 1 : 0;
    }
    assertThat(none).as("the fixture has such queries").isPositive();
    Cli.Result f = Cli.run("fidelity", "--index", part.toString(), "--queries", "" + train.length, "-k", "" + k, "--format", "json");
    assertThat(f.code()).as(f.describe()).isZero();
    JsonNode doc = json(f);
    assertThat(doc.get("accuracy").get("labeled").asInt()).isEqualTo(labelled);
    List<String> names = new ArrayList<>();
    doc.fieldNames().forEachRemaining(names::add);
    assertThat(names.getLast()).isEqualTo("no_labelled_neighbour");
    JsonNode counts = doc.get("no_labelled_neighbour");
    assertThat(counts.get("hamming").asInt()).as(f.describe()).isEqualTo(none);
    for (String metric : List.of("refined", "cosine")) assertThat(counts.get(metric).asInt()).as(metric).isBetween(0, labelled);
    assertThat(counts.get("euclidean_inputs").isNull()).isTrue();
    int most = Math.max(none, Math.max(counts.get("refined").asInt(), counts.get("cosine").asInt()));
    assertThat(doc.get("verdict").asText().startsWith("Too few labels to compare the accuracies")).as(f.describe()).isEqualTo(most * 10 > labelled);
    assertThat(f.err()).contains("note: of the " + labelled + " labelled queries").contains(none + " under hamming")
        .contains("among their " + k + " nearest").contains("counts as wrong");

    Cli.Result csv = Cli.run("fidelity", "--index", part.toString(), "--queries", "" + train.length, "-k", "" + k, "--format", "csv");
    List<String> rows = csv.out().lines().toList();
    assertThat(rows.subList(rows.size() - 4, rows.size())).containsExactly("no_labelled_neighbour_hamming," + none,
        "no_labelled_neighbour_refined," + counts.get("refined").asInt(), "no_labelled_neighbour_cosine," + counts.get("cosine").asInt(),
        "no_labelled_neighbour_euclidean_inputs,");
    assertThat(csv.err()).contains(none + " under hamming");

    Cli.Result full = Cli.run("fidelity", "--index", idx.toString(), "--queries", "50", "-k", "" + k, "--format", "json");
    assertThat(full.code()).as(full.describe()).isZero();
    assertThat(json(full).get("no_labelled_neighbour").get("hamming").asInt()).isZero();
    assertThat(full.err()).doesNotContain("labelled queries");
    assertThat(json(full).get("verdict").asText()).doesNotContain("Too few labels");
    Cli.Result unlabelled = Cli.run("fidelity", "--activations", acts.toString(), "--queries", "20", "--format", "json");
    assertThat(json(unlabelled).get("no_labelled_neighbour").isNull()).isTrue();
  }

  @Test
  void badInputIsRefusedWithExitTwoAndTheIndexUnchanged() {
    Map<String, String> before = Files2.checksums(idx);
    boolean[][] bits = new boolean[20][12];
    for (int i = 0; i < 20; i++) for (int j = 0; j < 12; j++) bits[i][j] = train[i][j] > 0;
    Path codes = Files2.bits(tmp.resolve("codes.npy"), bits);
    Path codesIdx = tmp.resolve("codes-idx");
    assertThat(Cli.run("build", "--out", codesIdx.toString(), "--codes", codes.toString()).code()).isZero();
    Map<String, String> codesBefore = Files2.checksums(codesIdx);
    List<String[]> cases = List.of(
        new String[] {"nearest", "--index", codesIdx.toString(), "--codes", codes.toString(), "--refine", "cosine"},
        new String[] {"nearest", "--index", idx.toString(), "--activations", queries.toString(), "--refine", "cosine", "-k", "0"},
        new String[] {"nearest", "--index", idx.toString(), "--activations", queries.toString(), "--refine", "cosine", "--candidates", "0"},
        new String[] {"nearest", "--index", idx.toString(), "--activations", queries.toString(), "--refine", "cosine", "-k", "5",
            "--candidates", "4"},
        new String[] {"nearest", "--index", idx.toString(), "--activations", queries.toString(), "--refine", "manhattan"},
        new String[] {"nearest", "--index", idx.toString(), "--codes", codes.toString(), "--refine", "cosine"},
        new String[] {"nearest", "--index", idx.toString(), "--activations", queries.toString(), "--candidates", "9"},
        new String[] {"fidelity", "--index", idx.toString(), "--queries", "151"},
        new String[] {"fidelity", "--index", idx.toString(), "-k", "0"},
        new String[] {"fidelity", "--index", idx.toString(), "--candidates", "0"},
        new String[] {"fidelity", "--index", codesIdx.toString()},
        new String[] {"fidelity", "--index", idx.toString(), "--activations", acts.toString()},
        new String[] {"build", "--out", tmp.resolve("x1").toString(), "--codes", codes.toString(), "--magnitudes", "8"},
        new String[] {"build", "--out", tmp.resolve("x2").toString(), "--activations", acts.toString(), "--magnitudes", "3"},
        new String[] {"add", "--index", idx.toString(), "--codes", codes.toString()});
    for (String[] args : cases) {
      Cli.Result r = Cli.run(args);
      assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
      // one line naming the problem (usage errors add the project's "Run '... --help'" hint line)
      assertThat(r.err().strip().lines().filter(l -> !l.startsWith("Run 'actindex")).count()).as(r.describe()).isEqualTo(1);
    }
    Cli.Result r = Cli.run(cases.get(0));
    assertThat(r.err()).contains("built from codes").contains("--activations");
    assertThat(Cli.run(cases.get(7)).err()).contains("--queries 151").contains("150 examples");
    assertThat(Files2.checksums(idx)).isEqualTo(before);
    assertThat(Files2.checksums(codesIdx)).isEqualTo(codesBefore);
    assertThat(Files.exists(tmp.resolve("x1"))).isFalse();
    assertThat(Files.exists(tmp.resolve("x2"))).isFalse();
  }

  @Test
  void addKeepsMagnitudesForTheNewRows() {
    Cli.Result r = Cli.run("add", "--index", idx.toString(), "--activations", queries.toString(), "--format", "json");
    assertThat(r.code()).as(r.describe()).isZero();
    assertThat(json(r).get("magnitudes").get("bits").asInt()).isEqualTo(8);
    // a query equal to an added row finds it first: cosine distance 0 up to quantisation
    Cli.Result n = Cli.run("nearest", "--index", idx.toString(), "--activations", queries.toString(), "--rows", "2", "-k", "1",
        "--refine", "cosine", "--format", "json");
    assertThat(n.code()).as(n.describe()).isZero();
    assertThat(json(n).get("results").get(0).get("neighbors").get(0).get("id").asInt()).isEqualTo(152);
  }

  private static int hamming(float[] a, float[] b) {
    int h = 0;
    for (int j = 0; j < a.length; j++) h += (a[j] > 0) != (b[j] > 0) ? 1 : 0;
    return h;
  }

  private static float[][] dequantised(float[][] v) {
    int n = v.length, d = v[0].length;
    float[][] out = new float[n][d];
    for (int j = 0; j < d; j++) {
      float lo = Float.POSITIVE_INFINITY, hi = Float.NEGATIVE_INFINITY;
      for (float[] row : v) {
        lo = Math.min(lo, row[j]);
        hi = Math.max(hi, row[j]);
      }
      float step = (float) (((double) hi - lo) / 255);
      for (int i = 0; i < n; i++) {
        long qv = step == 0 ? 0 : Math.round(((double) v[i][j] - lo) / step);
        out[i][j] = lo + Math.max(0, Math.min(255, qv)) * step;
      }
    }
    return out;
  }

  private static double cosine(float[] a, float[] b) {
    double dot = 0, na = 0, nb = 0;
    for (int j = 0; j < a.length; j++) {
      dot += (double) a[j] * b[j];
      na += (double) a[j] * a[j];
      nb += (double) b[j] * b[j];
    }
    return na == 0 || nb == 0 ? 1 : 1 - dot / Math.sqrt(na * nb);
  }
}
