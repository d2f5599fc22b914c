package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.Reference.Example;
import io.actindex.core.Randoms;
import io.actindex.encode.io.SafetensorsWriter;
import io.actindex.query.Compare;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** {@code compare} through the command line: JSON against direct computation in the test, and refused input. */
class CompareEndToEndTest {
  @TempDir Path tmp;

  static boolean[][] codes(SplittableRandom r, int n, int bits, double shift) {
    boolean[][] out = new boolean[n][bits];
    for (int i = 0; i < n; i++)
      for (int b = 0; b < bits; b++) out[i][b] = r.nextDouble() < (b < 8 ? 0.3 + shift : 0.5);
    return out;
  }

  static int hamming(boolean[] x, boolean[] y) {
    int d = 0;
    for (int b = 0; b < x.length; b++) if (x[b] != y[b]) d++;
    return d;
  }

  /** MMD^2_u (Gretton et al., JMLR 2012, eq. 3) written out over the pairs, agreement kernel 1 - d/L. */
  static double mmd2(boolean[][] a, boolean[][] b) {
    double L = a[0].length, xx = 0, yy = 0, xy = 0;
    for (int i = 0; i < a.length; i++) for (int j = 0; j < a.length; j++) if (i != j) xx += 1 - hamming(a[i], a[j]) / L;
    for (int i = 0; i < b.length; i++) for (int j = 0; j < b.length; j++) if (i != j) yy += 1 - hamming(b[i], b[j]) / L;
    for (boolean[] x : a) for (boolean[] y : b) xy += 1 - hamming(x, y) / L;
    int m = a.length, n = b.length;
    return xx / (m * (m - 1.0)) + yy / (n * (n - 1.0)) - 2 * xy / ((double) m * n);
  }

  /** W2 by trying every matching (n <= 7). */
  static double w2(boolean[][] a, boolean[][] b) {
    return Math.sqrt(best(a, b, 0, new boolean[b.length]) / a.length);
  }

  private static double best(boolean[][] a, boolean[][] b, int row, boolean[] used) {
    if (row == a.length) return 0;
    double best = Double.POSITIVE_INFINITY;
    for (int j = 0; j < b.length; j++) {
      if (used[j]) continue;
      used[j] = true;
      int d = hamming(a[row], b[j]);
      best = Math.min(best, d * d + best(a, b, row + 1, used));
      used[j] = false;
    }
    return best;
  }

  @Test
  void codesFilesMatchDirectComputation() throws Exception {
    long seed = Randoms.seed(400);
    SplittableRandom r = new SplittableRandom(seed);
    boolean[][] a = codes(r, 7, 70, 0), b = codes(r, 7, 70, 0.5);
    Path fa = Files2.bits(tmp.resolve("a.npy"), a), fb = Files2.bits(tmp.resolve("b.npy"), b);
    JsonNode doc = NearestEndToEndTest.json("compare", "--a", fa.toString(), "--b", fb.toString(), "--kind", "codes",
        "--permutations", "200", "--format", "json", "--top", "3");
    String what = Randoms.describe(seed);
    assertThat(doc.get("a").get("rows").asInt()).isEqualTo(7);
    JsonNode agree = doc.get("mmd").get(0);
    assertThat(agree.get("kernel").asText()).isEqualTo("agreement");
    assertThat(agree.get("mmd2").asDouble()).as(what).isCloseTo(mmd2(a, b), within(1e-12));
    assertThat(agree.get("p_value").asDouble()).isBetween(1 / 201.0, 1.0);
    assertThat(doc.get("mmd").get(1).get("kernel").asText()).isEqualTo("exponential");
    assertThat(doc.get("w2").get("method").asText()).isEqualTo("exact");
    assertThat(doc.get("w2").get("w2").asDouble()).as(what).isCloseTo(w2(a, b), within(1e-12));
    assertThat(doc.get("floats").isNull()).isTrue();
    assertThat(doc.get("floats_absent").asText()).contains("no float activations");
    assertThat(doc.get("neurons").size()).isEqualTo(3);
    assertThat(doc.get("correction").asText()).contains("Benjamini-Hochberg");
    assertThat(doc.get("verdict").asText()).contains("not a guarantee");
    // A against itself: every statistic says "no difference"
    JsonNode self = NearestEndToEndTest.json("compare", "--a", fa.toString(), "--b", fa.toString(), "--kind", "codes",
        "--permutations", "50", "--format", "json");
    assertThat(self.get("w2").get("w2").asDouble()).isZero();
    assertThat(self.get("neurons_moved").asInt()).isZero();
    assertThat(self.get("verdict").asText()).startsWith("no difference detected").contains("Bonferroni");
  }

  @Test
  void constantSamplesNeverReadAsDifferent() throws Exception {
    // both samples one code repeated: every MMD^2 is 0 and every p-value 1 (the permutation rule
    // (1 + #{null >= observed}) / (1 + P) when every relabeling ties, and the linear test's exact
    // sign-flip p-value; its z is undefined there, null in JSON)
    boolean[][] same = new boolean[6][12];
    for (boolean[] row : same) row[3] = row[7] = true;
    Path fa = Files2.bits(tmp.resolve("same_a.npy"), same), fb = Files2.bits(tmp.resolve("same_b.npy"), same);
    String[] args = {"compare", "--a", fa.toString(), "--b", fb.toString(), "--kind", "codes", "--permutations", "50"};
    JsonNode doc = NearestEndToEndTest.json(concat(args, "--format", "json"));
    for (JsonNode m : doc.get("mmd")) {
      assertThat(m.get("mmd2").asDouble()).as(m.toString()).isZero();
      assertThat(m.get("p_value").asDouble()).as(m.toString()).isEqualTo(1.0);
    }
    JsonNode lin = doc.get("linear_mmd");
    assertThat(lin.get("mmd2").asDouble()).as(lin.toString()).isZero();
    assertThat(lin.get("z").isNull()).as(lin.toString()).isTrue();
    assertThat(lin.get("p_value").asDouble()).as(lin.toString()).isEqualTo(1.0);
    assertThat(doc.get("verdict").asText()).startsWith("no difference detected");
    Cli.Result csv = Cli.run(concat(args, "--format", "csv"));
    assertThat(csv.out()).as(csv.describe()).contains("codes,mmd2_linear_exponential,0,1,3 pairs");
    Cli.Result table = Cli.run(args);
    assertThat(table.out()).as(table.describe()).containsPattern("linear-time +0\\.000 +1\\.000 ");

    // two rows each: no linear-time test, and a note says why
    Path ta = Files2.bits(tmp.resolve("two_a.npy"), new boolean[][] {same[0], same[1]});
    JsonNode two = NearestEndToEndTest.json("compare", "--a", ta.toString(), "--b", ta.toString(), "--kind", "codes", "--format", "json");
    assertThat(two.get("linear_mmd").isNull()).isTrue();
    assertThat(two.get("notes").toString()).contains("at least 4 rows in each sample (A has 2, B 2)");
  }

  /** A 2-layer MLP of {@code inputs} inputs, 4 hidden units and 2 outputs, random weights. */
  static Path mlp(Path file, int inputs, SplittableRandom r) {
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("0.weight", new SafetensorsWriter.Tensor(new long[] {4, inputs}, r.doubles(4L * inputs, -1, 1).toArray()));
    t.put("0.bias", new SafetensorsWriter.Tensor(new long[] {4}, r.doubles(4, -0.5, 0.5).toArray()));
    t.put("2.weight", new SafetensorsWriter.Tensor(new long[] {2, 4}, r.doubles(8, -1, 1).toArray()));
    t.put("2.bias", new SafetensorsWriter.Tensor(new long[] {2}, new double[2]));
    try {
      SafetensorsWriter.write(file, t, Map.of());
    } catch (java.io.IOException e) {
      throw new java.io.UncheckedIOException(e);
    }
    return file;
  }

  /** Sample B saved with its pandas row index: the refusal of the widths says column 0 looks like a row index, as nearest's does. */
  @Test
  void aSampleWithAnIndexColumnIsRefusedWithTheHint() {
    byte[] a = "0,1,2\n0.5,0,1\n0,0.25,1\n1,1,0\n".getBytes(java.nio.charset.StandardCharsets.UTF_8);
    byte[] b = ",0,1,2\n0,0.5,0,1\n1,0,0.25,1\n2,1,1,0\n".getBytes(java.nio.charset.StandardCharsets.UTF_8);
    Path fa = Files2.write(tmp.resolve("a.csv"), a), fb = Files2.write(tmp.resolve("b.csv"), b);
    Cli.Result r = Cli.run("compare", "--a", fa.toString(), "--b", fb.toString(), "--permutations", "20");
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err().strip()).as(r.describe()).contains("sample B has layout").contains(fb + ": hint: column 0 looks like a row index")
        .doesNotContain("\n");
  }

  @Test
  void withAModelsIndexTheKindFollowsTheIndexAndTheFilesWidth() {
    SplittableRandom r = new SplittableRandom(Randoms.seed(401));
    // 3 inputs, 4 hidden units: inputs and hidden activations have different widths
    Path idx = tmp.resolve("m3"), in = Files2.floats(tmp.resolve("in.npy"), SourcesEndToEndTest.activations(30, 3, r));
    ok(Cli.run("build", "--out", idx.toString(), "--model", mlp(tmp.resolve("m3.safetensors"), 3, r).toString(), "--inputs", in.toString()));
    String ia = Files2.floats(tmp.resolve("ia.npy"), SourcesEndToEndTest.activations(12, 3, r)).toString();
    String ib = Files2.floats(tmp.resolve("ib.npy"), SourcesEndToEndTest.activations(12, 3, r)).toString();
    String ha = Files2.floats(tmp.resolve("ha.npy"), SourcesEndToEndTest.activations(12, 4, r)).toString();
    String hb = Files2.floats(tmp.resolve("hb.npy"), SourcesEndToEndTest.activations(12, 4, r)).toString();
    String[] inputs = {"compare", "--index", idx.toString(), "--a", ia, "--b", ib, "--permutations", "20", "--format", "json"};
    // was exit 2 (read as activations: "layout act:3, the index expects 0:4"); report takes inputs for such an index
    assertThat(ok(Cli.run(inputs)).out()).isEqualTo(ok(Cli.run(concat(inputs, "--kind", "inputs"))).out());
    String[] hidden = {"compare", "--index", idx.toString(), "--a", ha, "--b", hb, "--permutations", "20", "--format", "json"};
    assertThat(ok(Cli.run(hidden)).out()).isEqualTo(ok(Cli.run(concat(hidden, "--kind", "activations"))).out());

    // 4 inputs, 4 hidden units: a 4-column file could be either; refused until --kind says which
    Path idx4 = tmp.resolve("m4"), in4 = Files2.floats(tmp.resolve("in4.npy"), SourcesEndToEndTest.activations(30, 4, r));
    ok(Cli.run("build", "--out", idx4.toString(), "--model", mlp(tmp.resolve("m4.safetensors"), 4, r).toString(), "--inputs", in4.toString()));
    String[] either = {"compare", "--index", idx4.toString(), "--a", ha, "--b", hb, "--permutations", "20"};
    Cli.Result refused = Cli.run(either);
    assertThat(refused.code()).as(refused.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(refused.err().strip()).as(refused.describe()).contains(ha).contains("--kind inputs").contains("--kind activations")
        .doesNotContain("\n");
    ok(Cli.run(concat(either, "--kind", "inputs")));
    ok(Cli.run(concat(either, "--kind", "activations")));

    // an index built from codes: files are codes (were read as activations, with a note that the
    // default rule binarized them)
    Path cidx = tmp.resolve("c");
    ok(Cli.run("build", "--out", cidx.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), codes(r, 20, 10, 0)).toString()));
    String[] onCodes = {"compare", "--index", cidx.toString(), "--a", Files2.bits(tmp.resolve("ca.npy"), codes(r, 8, 10, 0)).toString(),
        "--b", Files2.bits(tmp.resolve("cb.npy"), codes(r, 8, 10, 0.4)).toString(), "--permutations", "20", "--format", "json"};
    String inferred = ok(Cli.run(onCodes)).out();
    assertThat(inferred).isEqualTo(ok(Cli.run(concat(onCodes, "--kind", "codes"))).out()).doesNotContain("binarized");
  }

  /**
   * Samples of model inputs (with an index built from the model, or with --model) come with the
   * full-precision reference: the model's hidden activations on them, the same statistics as those
   * activations given as --a-floats/--b-floats (computed here by hand in double, saved as float32);
   * with --layers only that layer's units. A float file given for one sample is used for it.
   */
  @Test
  void inputsThroughAModelGiveTheFloatReference() throws Exception {
    SplittableRandom r = new SplittableRandom(Randoms.seed(402));
    int inputs = 3;
    // float32 values (the weights may be stored as float32), so that the computation by hand below uses the model's own weights
    double[] w0 = r.doubles(4L * inputs, -1, 1).map(v -> (float) v).toArray(), b0 = r.doubles(4, -0.5, 0.5).map(v -> (float) v).toArray();
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("0.weight", new SafetensorsWriter.Tensor(new long[] {4, inputs}, w0));
    t.put("0.bias", new SafetensorsWriter.Tensor(new long[] {4}, b0));
    t.put("2.weight", new SafetensorsWriter.Tensor(new long[] {3, 4}, r.doubles(12, -1, 1).toArray()));
    t.put("2.bias", new SafetensorsWriter.Tensor(new long[] {3}, r.doubles(3, -0.5, 0.5).toArray()));
    t.put("4.weight", new SafetensorsWriter.Tensor(new long[] {2, 3}, r.doubles(6, -1, 1).toArray()));
    Path model = tmp.resolve("m.safetensors");
    SafetensorsWriter.write(model, t, Map.of());
    float[][] xa = SourcesEndToEndTest.activations(20, inputs, r), xb = SourcesEndToEndTest.activations(16, inputs, r);
    for (float[] row : xb) row[0] += 1; // a shift
    Path ia = Files2.floats(tmp.resolve("ia.npy"), xa), ib = Files2.floats(tmp.resolve("ib.npy"), xb);
    Path idx = tmp.resolve("idx");
    ok(Cli.run("build", "--out", idx.toString(), "--model", model.toString(), "--inputs", ia.toString()));
    // the first hidden layer by hand: ReLU(W0 x + b0), in double, kept as float32 as activations files are
    Path ha = Files2.floats(tmp.resolve("ha.npy"), firstLayer(xa, w0, b0)), hb = Files2.floats(tmp.resolve("hb.npy"), firstLayer(xb, w0, b0));
    String[] common = {"--a", ia.toString(), "--b", ib.toString(), "--permutations", "50", "--format", "json", "--layers", "0"};
    JsonNode byHand = NearestEndToEndTest.json(concat(concat(new String[] {"compare", "--index", idx.toString()}, common),
        "--a-floats", ha.toString(), "--b-floats", hb.toString()));
    assertThat(byHand.get("floats").get("columns").asInt()).isEqualTo(4);
    for (String[] how : List.of(new String[] {"compare", "--index", idx.toString()}, new String[] {"compare", "--model", model.toString(),
        "--kind", "inputs"})) {
      JsonNode doc = NearestEndToEndTest.json(concat(how, common));
      String what = String.join(" ", how);
      assertThat(doc.get("floats_absent").isNull()).as(what).isTrue();
      assertThat(doc.get("floats").get("columns").asInt()).as(what).isEqualTo(4);
      assertThat(doc.get("floats").get("frechet").asDouble()).as(what).isCloseTo(byHand.get("floats").get("frechet").asDouble(), within(1e-9));
      assertThat(doc.get("floats").get("mmd").get("mmd2").asDouble()).as(what)
          .isCloseTo(byHand.get("floats").get("mmd").get("mmd2").asDouble(), within(1e-12));
      assertThat(doc.get("notes").toString()).as(what).contains("float sample A: the model's hidden activations (after ReLU) on " + ia + ", 4 units");
      // B's floats from a file: used for B, A's from the model
      JsonNode mixed = NearestEndToEndTest.json(concat(concat(how, common), "--b-floats", hb.toString()));
      assertThat(mixed.get("floats").get("frechet").asDouble()).as(what).isCloseTo(byHand.get("floats").get("frechet").asDouble(), within(1e-9));
      assertThat(mixed.get("notes").toString()).as(what).contains("float sample A:").doesNotContain("float sample B:");
    }
    // --model alone: the files are its inputs (was refused: "--model goes with --kind inputs")
    String[] bare = concat(new String[] {"compare", "--model", model.toString()}, common);
    assertThat(ok(Cli.run(bare)).out()).isEqualTo(ok(Cli.run(concat(bare, "--kind", "inputs"))).out());
    Cli.Result asActivations = Cli.run(concat(bare, "--kind", "activations"));
    assertThat(asActivations.code()).as(asActivations.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(asActivations.err()).as(asActivations.describe()).contains("--model goes with --kind inputs");
    // every hidden layer: 4 + 3 units
    JsonNode all = NearestEndToEndTest.json("compare", "--index", idx.toString(), "--a", ia.toString(), "--b", ib.toString(), "--permutations", "20",
        "--format", "json");
    assertThat(all.get("floats").get("columns").asInt()).isEqualTo(7);
  }

  /**
   * A sample of more rows x hidden units than {@link Compare#FLOATS_MAX} keeps no model floats
   * (they would take gigabytes, or not fit in one array): a note says so and names --a-floats; the
   * other sample's are still kept.
   */
  @Test
  void tooManyModelActivationsAreNotKeptAsFloats() throws Exception {
    SplittableRandom r = new SplittableRandom(Randoms.seed(403));
    int hidden = 4096, rows = (int) (Compare.FLOATS_MAX / hidden) + 1;
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("0.weight", new SafetensorsWriter.Tensor(new long[] {hidden, 2}, r.doubles(2L * hidden, -1, 1).toArray()));
    t.put("2.weight", new SafetensorsWriter.Tensor(new long[] {2, hidden}, r.doubles(2L * hidden, -1, 1).toArray()));
    Path model = tmp.resolve("wide.safetensors");
    SafetensorsWriter.write(model, t, Map.of());
    Path a = Files2.floats(tmp.resolve("a.npy"), SourcesEndToEndTest.activations(rows, 2, r));
    Path b = Files2.floats(tmp.resolve("b.npy"), SourcesEndToEndTest.activations(8, 2, r));
    JsonNode doc = NearestEndToEndTest.json("compare", "--model", model.toString(), "--a", a.toString(), "--b", b.toString(),
        "--permutations", "1", "--matrix-rows", "2", "--sinkhorn-rows", "2", "--format", "json");
    assertThat(doc.get("floats").isNull()).isTrue();
    assertThat(doc.get("floats_absent").asText()).startsWith("no float activations for A ");
    assertThat(doc.get("notes").toString()).contains("float sample A: the model's hidden activations (after ReLU) on " + a + " are not taken as its floats: "
        + rows + " rows of " + hidden + " units are more than " + Compare.FLOATS_MAX + " values; give --a-floats")
        .contains("float sample B: the model's hidden activations (after ReLU) on " + b);
  }

  /**
   * An index that keeps one small layer of a wide model: a sample of inputs whose every hidden unit
   * is more than {@link Compare#FLOATS_MAX} values, but whose units in the index are not, still gets
   * the model's floats for those units in its one read (the encoder computes the index's layers
   * only, so the read's cap counts the units compare counts), the same statistics as that layer's
   * activations computed here and given as a file.
   */
  @Test
  void aWideModelsSmallLayerStillGivesItsFloats() throws Exception {
    SplittableRandom r = new SplittableRandom(Randoms.seed(405));
    int wide = 4096, rows = (int) (Compare.FLOATS_MAX / (wide + 3)) + 1;
    double[] w0 = r.doubles(2L * wide, -1, 1).map(v -> (float) v).toArray(), w2 = r.doubles(3L * wide, -1, 1).map(v -> (float) v).toArray();
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("0.weight", new SafetensorsWriter.Tensor(new long[] {wide, 2}, w0));
    t.put("2.weight", new SafetensorsWriter.Tensor(new long[] {3, wide}, w2));
    t.put("4.weight", new SafetensorsWriter.Tensor(new long[] {2, 3}, r.doubles(6, -1, 1).toArray()));
    Path model = tmp.resolve("wide2.safetensors");
    SafetensorsWriter.write(model, t, Map.of());
    float[][] xa = SourcesEndToEndTest.activations(rows, 2, r), xb = SourcesEndToEndTest.activations(8, 2, r);
    Path a = Files2.floats(tmp.resolve("wa.npy"), xa), b = Files2.floats(tmp.resolve("wb.npy"), xb), idx = tmp.resolve("small-layer");
    ok(Cli.run("build", "--out", idx.toString(), "--model", model.toString(), "--inputs", b.toString(), "--layers", "2"));
    String[] common = {"compare", "--index", idx.toString(), "--a", a.toString(), "--b", b.toString(), "--permutations", "1",
        "--matrix-rows", "2", "--sinkhorn-rows", "2", "--format", "json"};
    JsonNode doc = NearestEndToEndTest.json(common);
    assertThat(doc.get("floats_absent").isNull()).isTrue();
    assertThat(doc.get("floats").get("columns").asInt()).isEqualTo(3);
    assertThat(doc.get("notes").toString()).contains("float sample A: the model's hidden activations (after ReLU) on " + a + ", 3 units");
    double[] none = new double[wide];
    Path ha = Files2.floats(tmp.resolve("wha.npy"), firstLayer(firstLayer(xa, w0, none), w2, new double[3]));
    Path hb = Files2.floats(tmp.resolve("whb.npy"), firstLayer(firstLayer(xb, w0, none), w2, new double[3]));
    JsonNode byHand = NearestEndToEndTest.json(concat(common, "--a-floats", ha.toString(), "--b-floats", hb.toString()));
    double f = byHand.get("floats").get("frechet").asDouble();
    assertThat(doc.get("floats").get("frechet").asDouble()).isCloseTo(f, within(1e-5 * Math.max(1, Math.abs(f))));
  }

  /**
   * Samples chosen by --a-where/--b-where on an index that keeps magnitudes come with the float
   * reference from them: the same statistics as the dequantised magnitudes (read here through
   * IndexReader) given as --a-floats/--b-floats; with --layers that layer's units; an index that
   * keeps none says there are no floats.
   */
  @Test
  void filteredSamplesTakeTheKeptMagnitudesAsFloats() throws Exception {
    SplittableRandom r = new SplittableRandom(Randoms.seed(404));
    float[][] acts = SourcesEndToEndTest.activations(60, 9, r);
    List<String> meta = new ArrayList<>(List.of("key,split"));
    for (int i = 0; i < acts.length; i++) meta.add("k" + i + "," + (i % 3 == 0 ? "b" : "a"));
    Path npz = tmp.resolve("acts.npz");
    float[][] h1 = new float[acts.length][], h2 = new float[acts.length][];
    for (int i = 0; i < acts.length; i++) {
      h1[i] = java.util.Arrays.copyOfRange(acts[i], 0, 5);
      h2[i] = java.util.Arrays.copyOfRange(acts[i], 5, 9);
    }
    try (io.actindex.encode.io.NpzWriter z = io.actindex.encode.io.NpzWriter.create(npz)) {
      for (float[][] layer : List.of(h1, h2)) {
        float[] flat = new float[layer.length * layer[0].length];
        for (int i = 0; i < layer.length; i++) System.arraycopy(layer[i], 0, flat, i * layer[i].length, layer[i].length);
        z.member(layer == h1 ? "h1" : "h2", io.actindex.encode.io.NpyDtype.FLOAT32, layer[0].length).write(flat, layer.length);
      }
      z.commit();
    }
    Path metaCsv = Files2.text(tmp.resolve("m.csv"), meta), idx = tmp.resolve("idx"), off = tmp.resolve("off");
    ok(Cli.run("build", "--out", idx.toString(), "--activations", npz.toString(), "--meta", metaCsv.toString()));
    ok(Cli.run("build", "--out", off.toString(), "--activations", npz.toString(), "--meta", metaCsv.toString(), "--magnitudes", "off"));
    float[][] keptA = new float[40][9], keptB = new float[20][9];
    try (io.actindex.index.store.IndexReader reader = io.actindex.index.store.IndexReader.open(idx)) {
      for (int i = 0; i < acts.length; i++) assertThat(reader.magnitudes(i, i % 3 == 0 ? keptB[i / 3] : keptA[i - i / 3 - 1], 0)).isTrue();
    }
    Path fa = Files2.floats(tmp.resolve("fa.npy"), keptA), fb = Files2.floats(tmp.resolve("fb.npy"), keptB);
    for (List<String> layers : List.of(List.<String>of(), List.of("--layers", "h2"))) {
      String[] where = concat(new String[] {"compare", "--index", idx.toString(), "--a-where", "split = a", "--b-where", "split = b",
          "--permutations", "50", "--format", "json"}, layers.toArray(String[]::new));
      JsonNode derived = NearestEndToEndTest.json(where);
      String[] withFiles = concat(where, "--a-floats", fa.toString(), "--b-floats", fb.toString());
      if (!layers.isEmpty()) { // a floats file is read whole: give the layer's columns
        float[][] la = new float[40][], lb = new float[20][];
        for (int i = 0; i < 40; i++) la[i] = java.util.Arrays.copyOfRange(keptA[i], 5, 9);
        for (int i = 0; i < 20; i++) lb[i] = java.util.Arrays.copyOfRange(keptB[i], 5, 9);
        withFiles = concat(where, "--a-floats", Files2.floats(tmp.resolve("la.npy"), la).toString(), "--b-floats",
            Files2.floats(tmp.resolve("lb.npy"), lb).toString());
      }
      JsonNode byHand = NearestEndToEndTest.json(withFiles);
      String what = String.join(" ", layers);
      assertThat(derived.get("floats").get("columns").asInt()).as(what).isEqualTo(layers.isEmpty() ? 9 : 4);
      assertThat(derived.get("floats")).as(what).isEqualTo(byHand.get("floats"));
      assertThat(derived.get("notes").toString()).as(what)
          .contains("float sample A: the index's kept 8-bit magnitudes (dequantised) of where split = a, " + (layers.isEmpty() ? 9 : 4) + " units");
    }
    JsonNode none = NearestEndToEndTest.json("compare", "--index", off.toString(), "--a-where", "split = a", "--b-where", "split = b",
        "--permutations", "20", "--format", "json");
    assertThat(none.get("floats").isNull()).isTrue();
    assertThat(none.get("floats_absent").asText()).startsWith("no float activations for A and B");
  }

  private static float[][] firstLayer(float[][] x, double[] w, double[] b) {
    float[][] h = new float[x.length][b.length];
    for (int i = 0; i < x.length; i++)
      for (int o = 0; o < b.length; o++) {
        double s = b[o];
        for (int j = 0; j < x[i].length; j++) s += w[o * x[i].length + j] * x[i][j];
        h[i][o] = (float) Math.max(0, s);
      }
    return h;
  }

  private static Cli.Result ok(Cli.Result r) {
    assertThat(r.code()).as(r.describe()).isZero();
    return r;
  }

  /** `--threads` defaults to one per core; 1, 3 and the default give the same document (Sinkhorn's rows, permutations, distances). */
  @Test
  void threadsGiveTheSameOutput() throws Exception {
    SplittableRandom r = new SplittableRandom(Randoms.seed(402));
    float[][] a = new float[45][10], b = new float[31][10];
    for (float[] row : a) for (int j = 0; j < 10; j++) row[j] = (float) r.nextGaussian();
    for (float[] row : b) for (int j = 0; j < 10; j++) row[j] = (float) (r.nextGaussian() + 0.5);
    Path fa = Files2.floats(tmp.resolve("ta.npy"), a), fb = Files2.floats(tmp.resolve("tb.npy"), b);
    List<String> outputs = new java.util.ArrayList<>();
    for (List<String> threads : List.of(List.of("--threads", "1"), List.of("--threads", "3"), List.<String>of())) {
      List<String> args = new java.util.ArrayList<>(List.of("compare", "--a", fa.toString(), "--b", fb.toString(), "--permutations", "200",
          "--format", "json"));
      args.addAll(threads);
      outputs.add(ok(Cli.run(args.toArray(String[]::new))).out());
    }
    assertThat(outputs.get(0)).contains("\"method\":\"sinkhorn\"");
    assertThat(outputs).containsOnly(outputs.get(0));
  }

  @Test
  void activationsGiveTheFloatReferenceAndUnequalSizesUseSinkhorn() throws Exception {
    SplittableRandom r = new SplittableRandom(Randoms.seed(401));
    float[][] a = new float[30][6], b = new float[20][6];
    for (float[] row : a) for (int j = 0; j < 6; j++) row[j] = (float) r.nextGaussian();
    for (float[] row : b) for (int j = 0; j < 6; j++) row[j] = (float) (r.nextGaussian() + 1);
    Path fa = Files2.floats(tmp.resolve("a.npy"), a), fb = Files2.floats(tmp.resolve("b.npy"), b);
    JsonNode doc = NearestEndToEndTest.json("compare", "--a", fa.toString(), "--b", fb.toString(), "--permutations", "100",
        "--format", "json", "--threads", "2");
    assertThat(doc.get("floats").get("columns").asInt()).isEqualTo(6);
    assertThat(doc.get("floats").get("frechet").asDouble()).isPositive();
    assertThat(doc.get("floats").get("mmd").get("kernel").asText()).isEqualTo("gaussian");
    assertThat(doc.get("w2").get("method").asText()).isEqualTo("sinkhorn");
    assertThat(doc.get("w2").get("iterations").asInt()).isPositive();
    assertThat(doc.get("notes").toString()).contains("Sinkhorn");
    for (String fmt : List.of("table", "csv")) {
      Cli.Result t = Cli.run("compare", "--a", fa.toString(), "--b", fb.toString(), "--permutations", "20", "--format", fmt);
      assertThat(t.code()).as(t.describe()).isZero();
      assertThat(t.out()).as(t.describe()).contains(fmt.equals("csv") ? "frechet" : "Frechet distance^2");
    }
  }

  /**
   * Which W2 method runs depends on the sample sizes, so options of the other method are noted on
   * stderr (one line naming them), not refused and not ignored in silence; the answer is the same.
   */
  @Test
  void w2OptionsOfTheMethodNotRunAreNoted() throws Exception {
    SplittableRandom r = new SplittableRandom(Randoms.seed(402));
    Path fa = Files2.bits(tmp.resolve("a.npy"), codes(r, 6, 20, 0)), fb = Files2.bits(tmp.resolve("b.npy"), codes(r, 6, 20, 0.4));
    Path fc = Files2.bits(tmp.resolve("c.npy"), codes(r, 9, 20, 0.4));
    String[] equal = {"compare", "--a", fa.toString(), "--b", fb.toString(), "--kind", "codes", "--permutations", "20", "--format", "json"};
    Cli.Result plain = Cli.run(equal);
    assertThat(plain.code()).as(plain.describe()).isZero();
    assertThat(plain.err()).as(plain.describe()).isEmpty();
    Cli.Result sinkhornOptions = Cli.run(concat(equal, "--reg", "0.2", "--tol", "1e-4"));
    assertThat(sinkhornOptions.code()).as(sinkhornOptions.describe()).isZero();
    assertThat(sinkhornOptions.err().strip().lines().toList()).as(sinkhornOptions.describe())
        .containsExactly("note: --reg, --tol not used: W2 is exact here (both samples have 6 rows, at most --exact-max 3000); they apply to Sinkhorn only");
    assertThat(sinkhornOptions.out()).isEqualTo(plain.out());
    String[] unequal = {"compare", "--a", fa.toString(), "--b", fc.toString(), "--kind", "codes", "--permutations", "20", "--format", "json"};
    Cli.Result exactMax = Cli.run(concat(unequal, "--exact-max", "10", "--reg", "0.2"));
    assertThat(exactMax.code()).as(exactMax.describe()).isZero();
    assertThat(exactMax.err().strip().lines().toList()).as(exactMax.describe())
        .containsExactly("note: --exact-max not used: the exact W2 needs samples of equal sizes, and A has 6 rows, B 9; W2 is Sinkhorn");
    Cli.Result sinkhorn = Cli.run(concat(unequal, "--reg", "0.2"));
    assertThat(sinkhorn.err()).as(sinkhorn.describe()).isEmpty();
  }

  private static String[] concat(String[] a, String... b) {
    List<String> all = new ArrayList<>(List.of(a));
    all.addAll(List.of(b));
    return all.toArray(new String[0]);
  }

  /** NumPy's np.median of a column. */
  static double median(float[][] rows, int col) {
    double[] v = new double[rows.length];
    for (int i = 0; i < rows.length; i++) v[i] = rows[i][col];
    java.util.Arrays.sort(v);
    int n = v.length;
    return n % 2 == 1 ? v[n / 2] : (v[n / 2 - 1] + v[n / 2]) / 2;
  }

  static boolean[][] above(float[][] rows, double[] cut) {
    boolean[][] out = new boolean[rows.length][rows[0].length];
    for (int i = 0; i < rows.length; i++) for (int j = 0; j < rows[0].length; j++) out[i][j] = rows[i][j] > cut[j];
    return out;
  }

  @Test
  void withoutAnIndexThresholdAndMedianRulesEncodeBothSamplesAlike() throws Exception {
    SplittableRandom r = new SplittableRandom(Randoms.seed(404));
    float[][] a = new float[25][9], b = new float[18][9];
    for (float[] row : a) for (int j = 0; j < 9; j++) row[j] = (float) (r.nextGaussian() + j * 0.1);
    for (float[] row : b) for (int j = 0; j < 9; j++) row[j] = (float) (r.nextGaussian() + 0.4);
    String fa = Files2.floats(tmp.resolve("a.npy"), a).toString(), fb = Files2.floats(tmp.resolve("b.npy"), b).toString();
    double[] threshold = new double[9], medians = new double[9];
    java.util.Arrays.fill(threshold, 0.5);
    for (int j = 0; j < 9; j++) medians[j] = median(a, j);
    JsonNode t = NearestEndToEndTest.json("compare", "--a", fa, "--b", fb, "--threshold", "0.5", "--permutations", "10", "--format", "json");
    assertThat(t.get("mmd").get(0).get("mmd2").asDouble()).isCloseTo(mmd2(above(a, threshold), above(b, threshold)), within(1e-12));
    // --median: the medians of A encode both samples (A is the reference)
    JsonNode m = NearestEndToEndTest.json("compare", "--a", fa, "--b", fb, "--median", "--permutations", "10", "--format", "json");
    assertThat(m.get("mmd").get(0).get("mmd2").asDouble()).isCloseTo(mmd2(above(a, medians), above(b, medians)), within(1e-12));
  }

  @Test
  void whereSamplesComeFromTheIndex() throws Exception {
    long seed = Randoms.seed(402);
    NearestEndToEndTest.Data d = NearestEndToEndTest.data(120, 1, 1, true, seed);
    List<Example> ex = NearestEndToEndTest.examples(d.index(), 0, "w", seed);
    Path idx = tmp.resolve("idx");
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), d.index()).toString(),
        "--code-layout", NearestEndToEndTest.LAYOUT, "--meta", NearestEndToEndTest.metaCsv(tmp.resolve("m.csv"), ex).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    List<boolean[]> train = new ArrayList<>(), other = new ArrayList<>();
    for (Example e : ex) (e.meta().get("split").equals("train") ? train : other).add(e.bits());
    JsonNode doc = NearestEndToEndTest.json("compare", "--index", idx.toString(), "--a-where", "split = train", "--b-where",
        "split != train", "--permutations", "50", "--format", "json");
    assertThat(doc.get("a").get("rows").asInt()).isEqualTo(train.size());
    assertThat(doc.get("b").get("rows").asInt()).isEqualTo(other.size());
    assertThat(doc.get("mmd").get(0).get("mmd2").asDouble())
        .isCloseTo(mmd2(train.toArray(boolean[][]::new), other.toArray(boolean[][]::new)), within(1e-12));
    assertThat(doc.get("layers").size()).isEqualTo(2);
    Map<String, String> before = Files2.checksums(idx);
    Cli.Result empty = Cli.run("compare", "--index", idx.toString(), "--a-where", "split = nowhere", "--b-where", "split = train");
    assertThat(empty.code()).as(empty.describe()).isEqualTo(2);
    assertThat(empty.err().strip().lines().count()).as(empty.describe()).isEqualTo(1);
    assertThat(empty.err()).contains("--a-where 'split = nowhere' matches 0 of the 120 live examples; sample A needs at least 2");
    float[][] floats = new float[train.size() + 1][3];
    for (int i = 0; i < floats.length; i++) floats[i] = new float[] {i, 1, 2};
    String trainFloats = Files2.floats(tmp.resolve("tf.npy"), floats).toString();
    Cli.Result mismatch = Cli.run("compare", "--index", idx.toString(), "--a-where", "split = train", "--b-where", "split != train",
        "--a-floats", trainFloats, "--b-floats", trainFloats, "--permutations", "5");
    assertThat(mismatch.code()).as(mismatch.describe()).isEqualTo(2);
    assertThat(mismatch.err().strip().lines().count()).as(mismatch.describe()).isEqualTo(1);
    assertThat(mismatch.err()).contains(trainFloats + ": float sample A has " + (train.size() + 1) + " rows, but its codes (where split = train) have "
        + train.size());
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  @Test
  void badInputIsRefusedWithOneLine() {
    SplittableRandom r = new SplittableRandom(Randoms.seed(403));
    String a = Files2.bits(tmp.resolve("a.npy"), codes(r, 5, 16, 0)).toString();
    String wide = Files2.bits(tmp.resolve("wide.npy"), codes(r, 5, 24, 0)).toString();
    String one = Files2.bits(tmp.resolve("one.npy"), codes(r, 1, 16, 0)).toString();
    String nan = Files2.floats(tmp.resolve("nan.npy"), new float[][] {{1, Float.NaN}, {0, 1}, {0, 1}, {0, 1}, {0, 1}}).toString();
    String fine = Files2.floats(tmp.resolve("fine.npy"), new float[][] {{1, 2}, {0, 1}, {0, 2}, {1, 1}, {2, 1}}).toString();
    String wideFloats = Files2.floats(tmp.resolve("wide-floats.npy"), new float[][] {{1, 2, 3}, {0, 1, 2}, {0, 1, 2}, {0, 1, 2}, {0, 1, 2}}).toString();
    List<String[]> cases = List.of(
        new String[] {"compare", "--a", a, "--b", wide, "--kind", "codes"},
        new String[] {"compare", "--a", a, "--b", one, "--kind", "codes"},
        new String[] {"compare", "--a", nan, "--b", fine},
        new String[] {"compare", "--a", a, "--b", a, "--kind", "codes", "--a-floats", nan, "--b-floats", fine},
        new String[] {"compare", "--a", a, "--b", a, "--kind", "codes", "--permutations", "0"},
        // float samples of different widths: was an internal error (exit 1) from the Frechet distance
        new String[] {"compare", "--a", a, "--b", a, "--kind", "codes", "--a-floats", fine, "--b-floats", wideFloats});
    for (String[] args : cases) {
      Cli.Result res = Cli.run(args);
      assertThat(res.code()).as(res.describe()).isEqualTo(2);
      assertThat(res.err().strip().lines().count()).as(res.describe()).isEqualTo(1);
      assertThat(res.out()).as(res.describe()).isEmpty();
    }
    // beyond what the 16-bit distances and one-array matrices hold: were internal errors (exit 1)
    String huge = Files2.bits(tmp.resolve("huge.npy"), codes(r, 3, Compare.MAX_BITS + 1, 0)).toString();
    Cli.Result tooWide = Cli.run("compare", "--a", huge, "--b", huge, "--kind", "codes", "--permutations", "5");
    assertThat(tooWide.code()).as(tooWide.describe()).isEqualTo(2);
    assertThat(tooWide.err().strip()).as(tooWide.describe()).contains("65536 bits", "at most 65535", "--layers").doesNotContain("\n");
    Cli.Result someLayers = Cli.run("compare", "--a", huge, "--b", huge, "--kind", "codes", "--permutations", "5",
        "--code-layout", "x:65000,y:536", "--layers", "y", "--format", "json");
    assertThat(someLayers.code()).as(someLayers.describe()).isZero();
    for (String[] option : List.of(new String[] {"--matrix-rows", "23171"}, new String[] {"--exact-max", "46341"},
        new String[] {"--sinkhorn-rows", "46341"}, new String[] {"--sinkhorn-rows", "1"})) {
      Cli.Result res = Cli.run("compare", "--a", a, "--b", a, "--kind", "codes", option[0], option[1]);
      assertThat(res.code()).as(res.describe()).isEqualTo(2);
      assertThat(res.err().strip().lines().count()).as(res.describe()).isEqualTo(1);
      assertThat(res.err()).as(res.describe()).contains(option[0]);
    }
    // floats with another row count than the codes they pair with: were used silently (the float
    // reference then compared other examples than the codes)
    String short4 = Files2.floats(tmp.resolve("short.npy"), new float[][] {{1, 2}, {0, 1}, {0, 2}, {1, 1}}).toString();
    Cli.Result ra = Cli.run("compare", "--a", a, "--b", a, "--kind", "codes", "--a-floats", short4, "--b-floats", fine);
    assertThat(ra.code()).as(ra.describe()).isEqualTo(2);
    assertThat(ra.err().strip()).as(ra.describe()).isEqualTo("actindex compare: " + short4 + ": float sample A has 4 rows, but its codes (" + a
        + ") have 5; --a-floats must hold the same examples in the same order");
    Cli.Result rb = Cli.run("compare", "--a", a, "--b", a, "--kind", "codes", "--a-floats", fine, "--b-floats", short4);
    assertThat(rb.code()).as(rb.describe()).isEqualTo(2);
    assertThat(rb.err().strip().lines().count()).as(rb.describe()).isEqualTo(1);
    assertThat(rb.err()).as(rb.describe()).contains(short4 + ": float sample B has 4 rows, but its codes (" + a + ") have 5", "--b-floats");
    // usage errors: the message, then the project's "--help" hint line
    for (String[] args : List.of(new String[] {"compare", "--a", a, "--kind", "codes"},
        new String[] {"compare", "--a", a, "--b-where", "split = x"})) {
      Cli.Result res = Cli.run(args);
      assertThat(res.code()).as(res.describe()).isEqualTo(2);
      assertThat(res.err().lines().findFirst().orElseThrow()).as(res.describe()).contains("--b");
      assertThat(res.err()).as(res.describe()).contains("--help' for usage");
    }
  }
}
