package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.Reference.Example;
import io.actindex.cli.Reference.Layer;
import io.actindex.encode.io.SafetensorsWriter;
import io.actindex.core.Randoms;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The other sources through the command line: float activations (default rule and
 * {@code --threshold}), and a model with its inputs, where the index keeps the model so queries
 * can be given as inputs. Expected codes are computed here, independently.
 */
class SourcesEndToEndTest {
  @TempDir Path tmp;

  /** n x d activations: a third exactly 0, the rest spread over [-2, 2) in steps of 1/8 (exact in float32). */
  static float[][] activations(int n, int d, SplittableRandom rnd) {
    float[][] a = new float[n][d];
    for (float[] row : a) for (int j = 0; j < d; j++) row[j] = rnd.nextInt(3) == 0 ? 0f : (rnd.nextInt(32) - 16) / 8f;
    return a;
  }

  static boolean[][] binarize(float[][] a, double t) {
    boolean[][] b = new boolean[a.length][a[0].length];
    for (int i = 0; i < a.length; i++) for (int j = 0; j < a[i].length; j++) b[i][j] = a[i][j] > t;
    return b;
  }

  static List<Example> plain(boolean[][] codes) {
    List<Example> out = new ArrayList<>();
    for (int i = 0; i < codes.length; i++) out.add(new Example(i, codes[i], Map.of()));
    return out;
  }

  /** Checks ids and distances (no metadata) of a nearest JSON document. */
  static void checkHits(JsonNode doc, List<Example> live, boolean[][] queries, int k, List<Layer> on, String what) {
    for (int qi = 0; qi < queries.length; qi++) {
      List<Reference.Hit> got = new ArrayList<>();
      for (JsonNode nb : doc.get("results").get(qi).get("neighbors"))
        got.add(new Reference.Hit(nb.get("id").asInt(), nb.get("distance").asInt()));
      assertThat(got).as(what + " query " + qi).isEqualTo(Reference.knn(live, queries[qi], k, m -> true, on));
    }
  }

  @Test
  void activationsWithDefaultRuleAndWithThreshold() throws Exception {
    long seed = Randoms.seed(500);
    SplittableRandom rnd = new SplittableRandom(seed);
    float[][] acts = activations(200, 70, rnd), q = activations(6, 70, rnd);
    Path a = Files2.floats(tmp.resolve("acts.npy"), acts), qa = Files2.floats(tmp.resolve("q.npy"), q);
    List<Layer> all = Reference.layers("act:70");
    for (double t : new double[] {0, 0.5}) {
      Path idx = tmp.resolve("idx" + t);
      List<String> args = new ArrayList<>(List.of("build", "--out", idx.toString(), "--activations", a.toString()));
      if (t != 0) args.addAll(List.of("--threshold", Double.toString(t)));
      Cli.Result b = Cli.run(args.toArray(String[]::new));
      assertThat(b.code()).as(b.describe()).isZero();
      JsonNode doc = NearestEndToEndTest.json("nearest", "--index", idx.toString(), "--activations", qa.toString(), "-k", "8",
          "--format", "json");
      checkHits(doc, plain(binarize(acts, t)), binarize(q, t), 8, all, Randoms.describe(seed) + " threshold " + t);
      // keys default to row-<id> when no metadata is given; no label means no label field value
      JsonNode first = doc.get("results").get(0).get("neighbors").get(0);
      assertThat(first.get("key").asText()).isEqualTo("row-" + first.get("id").asInt());
      assertThat(first.get("label").isNull()).isTrue();
    }
  }

  /** The README's two commands: activations + metadata CSV, then a neighbour table. */
  /**
   * Codes saved as 0/1 floats (a float tensor of codes, or {@code (acts > 0).astype(np.float32)})
   * build an index and query it like bool codes; activations passed as codes are refused by row and
   * column, exit 2, nothing written.
   */
  @Test
  void codesAsZeroOneFloatsBuildAndQueryLikeBools() throws Exception {
    long seed = Randoms.seed(501);
    SplittableRandom rnd = new SplittableRandom(seed);
    float[][] acts = activations(120, 70, rnd), q = activations(5, 70, rnd);
    boolean[][] codes = binarize(acts, 0), qcodes = binarize(q, 0);
    float[][] asFloats = new float[codes.length][70];
    for (int i = 0; i < codes.length; i++) for (int j = 0; j < 70; j++) asFloats[i][j] = codes[i][j] ? 1f : 0f;
    Path idx = tmp.resolve("idx");
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--codes", Files2.floats(tmp.resolve("codes.npy"), asFloats).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    JsonNode doc = NearestEndToEndTest.json("nearest", "--index", idx.toString(), "--codes",
        Files2.bits(tmp.resolve("q.npy"), qcodes).toString(), "-k", "6", "--format", "json");
    checkHits(doc, plain(codes), qcodes, 6, Reference.layers("codes:70"), Randoms.describe(seed));

    Path other = tmp.resolve("other");
    Cli.Result refused = Cli.run("build", "--out", other.toString(), "--codes", Files2.floats(tmp.resolve("acts.npy"), acts).toString());
    assertThat(refused.code()).as(refused.describe()).isEqualTo(2);
    assertThat(refused.err()).contains("acts.npy").contains("is not 0 or 1").doesNotContain("internal error");
    assertThat(Files2.checksums(other)).isEmpty();
  }

  @Test
  void readmeTwoCommandsGiveANeighbourTable() {
    long seed = Randoms.seed(550);
    SplittableRandom rnd = new SplittableRandom(seed);
    float[][] acts = activations(60, 16, rnd), q = activations(2, 16, rnd);
    List<String> csv = new ArrayList<>(List.of("key,label,split,site"));
    for (int i = 0; i < acts.length; i++) csv.add("ex-" + i + "," + (i % 2 == 0 ? "cat" : "dog") + ",train,site" + (i % 3));
    Path dir = tmp.resolve("my-index");
    Cli.Result build = Cli.run("build", "--out", dir.toString(), "--activations",
        Files2.floats(tmp.resolve("train_acts.npy"), acts).toString(), "--meta", Files2.text(tmp.resolve("train_meta.csv"), csv).toString());
    assertThat(build.code()).as(build.describe()).isZero();
    Cli.Result table = Cli.run("nearest", "--index", dir.toString(), "--activations",
        Files2.floats(tmp.resolve("new_acts.npy"), q).toString(), "-k", "5");
    assertThat(table.code()).as(table.describe()).isZero();
    assertThat(table.out()).as(table.describe()).contains("query row 0  vote: ").contains("query row 1  vote: ")
        .containsPattern("rank +distance +act +key +label +split +site");
    for (Reference.Hit h : Reference.knn(plain(binarize(acts, 0)), binarize(q, 0)[1], 5, m -> true, Reference.layers("act:16")))
      assertThat(table.out()).containsPattern("\\s" + h.distance() + "\\s+" + h.distance() + "\\s+ex-" + h.id() + "\\s");
  }

  /**
   * An MLP 3 -> 5 -> 4 -> 2 with small integer weights, biases off by a half (layer 1) or a quarter
   * (layer 2) and integer inputs, so no pre-activation is ever exactly 0 and float32 arithmetic is
   * exact: the expected codes follow from plain double arithmetic here.
   */
  @Test
  void modelAndInputsWithTheStoredModelForQueries() throws Exception {
    long seed = Randoms.seed(600);
    SplittableRandom rnd = new SplittableRandom(seed);
    int[] widths = {3, 5, 4, 2};
    double[][][] w = new double[3][][];
    double[][] bias = new double[3][];
    Map<String, SafetensorsWriter.Tensor> tensors = new LinkedHashMap<>();
    for (int l = 0; l < 3; l++) {
      int in = widths[l], out = widths[l + 1];
      w[l] = new double[out][in];
      bias[l] = new double[out];
      double[] flat = new double[out * in];
      for (int o = 0; o < out; o++) {
        for (int i = 0; i < in; i++) flat[o * in + i] = w[l][o][i] = rnd.nextInt(5) - 2;
        bias[l][o] = rnd.nextInt(5) - 2 + (l == 0 ? 0.5 : 0.25);
      }
      tensors.put((2 * l) + ".weight", new SafetensorsWriter.Tensor(new long[] {out, in}, flat));
      tensors.put((2 * l) + ".bias", new SafetensorsWriter.Tensor(new long[] {out}, bias[l].clone()));
    }
    Path model = tmp.resolve("mlp.safetensors");
    SafetensorsWriter.write(model, tensors, Map.of());
    float[][] x = new float[150][3], qx = new float[5][3];
    for (float[][] m : new float[][][] {x, qx}) for (float[] row : m) for (int j = 0; j < 3; j++) row[j] = rnd.nextInt(7) - 3;
    Path idx = tmp.resolve("idx");
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--model", model.toString(), "--inputs",
        Files2.floats(tmp.resolve("x.npy"), x).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    JsonNode doc = NearestEndToEndTest.json("nearest", "--index", idx.toString(), "--inputs",
        Files2.floats(tmp.resolve("qx.npy"), qx).toString(), "-k", "6", "--format", "json");
    // --layers naming the output layer: refused, saying that it is the output layer and how to encode it
    Cli.Result out = Cli.run("build", "--out", tmp.resolve("idx-out").toString(), "--model", model.toString(), "--inputs",
        tmp.resolve("x.npy").toString(), "--layers", "4");
    assertThat(out.code()).as(out.describe()).isEqualTo(2);
    assertThat(out.err()).as(out.describe()).contains("no hidden layer named '4' (hidden layers: [0, 2]); '4' is the output layer,"
        + " which is not encoded (--no-output-layer makes every layer a code layer)");
    assertThat(tmp.resolve("idx-out")).doesNotExist();
    boolean[][] codes = new boolean[x.length][], qcodes = new boolean[qx.length][];
    for (int i = 0; i < x.length; i++) codes[i] = hidden(x[i], w, bias);
    for (int i = 0; i < qx.length; i++) qcodes[i] = hidden(qx[i], w, bias);
    JsonNode ld = doc.get("results").get(0).get("neighbors").get(0).get("layer_distances");
    List<String> names = new ArrayList<>();
    ld.fieldNames().forEachRemaining(names::add);
    assertThat(names).as("one code segment per hidden layer").hasSize(2);
    List<Layer> layers = Reference.layers(names.get(0) + ":5", names.get(1) + ":4");
    checkHits(doc, plain(codes), qcodes, 6, layers, Randoms.describe(seed) + " model");
    for (JsonNode r : doc.get("results"))
      for (JsonNode nb : r.get("neighbors")) {
        int id = nb.get("id").asInt();
        int qi = r.get("query").asInt();
        assertThat(nb.get("layer_distances").get(names.get(0)).asInt())
            .isEqualTo(Reference.distance(qcodes[qi], codes[id], List.of(layers.get(0))));
      }
  }

  /** On/off states of the two hidden layers, computed in double (exact here). */
  static boolean[] hidden(float[] x, double[][][] w, double[][] b) {
    double[] a = new double[x.length];
    for (int j = 0; j < x.length; j++) a[j] = x[j];
    boolean[] code = new boolean[9];
    int bit = 0;
    for (int l = 0; l < 2; l++) {
      double[] next = new double[w[l].length];
      for (int o = 0; o < next.length; o++) {
        double s = b[l][o];
        for (int i = 0; i < a.length; i++) s += w[l][o][i] * a[i];
        code[bit++] = s > 0;
        next[o] = Math.max(0, s);
      }
      a = next;
    }
    return code;
  }

  /**
   * A hand-built network with known regions: one hidden layer of four ReLU units on 2-D inputs,
   * whose boundary lines x = 0.3, y = -0.2, x + y = 1 and x - y = 0.9 are in general position (no
   * two parallel, no three through one point). n lines in general position cut the plane into
   * 1 + n + n(n-1)/2 regions (Zaslavsky 1975, "Facing up to arrangements", Memoirs AMS 154), so 11
   * for n = 4. A grid over [-2, 3]^2 with step 0.05 holds every intersection point with margin;
   * census must count 11 regions, and the query at (-1, -1) must land in a populated region.
   */
  @Test
  void handBuiltNetworkHasTheRegionsTheArrangementPredicts() throws Exception {
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("0.weight", new SafetensorsWriter.Tensor(new long[] {4, 2}, new double[] {1, 0, 0, 1, 1, 1, 1, -1}));
    t.put("0.bias", new SafetensorsWriter.Tensor(new long[] {4}, new double[] {-0.3, 0.2, -1, -0.9}));
    t.put("2.weight", new SafetensorsWriter.Tensor(new long[] {1, 4}, new double[] {1, 1, 1, 1}));
    t.put("2.bias", new SafetensorsWriter.Tensor(new long[] {1}, new double[] {0}));
    Path model = tmp.resolve("lines.safetensors");
    SafetensorsWriter.write(model, t, Map.of());
    List<float[]> grid = new ArrayList<>();
    for (int i = 0; i < 100; i++) for (int j = 0; j < 100; j++) grid.add(new float[] {-2 + 0.025f + 0.05f * i, -2 + 0.025f + 0.05f * j});
    Path idx = tmp.resolve("idx");
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--model", model.toString(), "--inputs",
        Files2.floats(tmp.resolve("grid.npy"), grid.toArray(float[][]::new)).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    JsonNode census = NearestEndToEndTest.json("census", "--index", idx.toString(), "--format", "json");
    assertThat(census.get("prefixes").get(0).get("regions").asInt()).isEqualTo(1 + 4 + 4 * 3 / 2);

    JsonNode region = NearestEndToEndTest.json("region", "--index", idx.toString(), "--inputs",
        Files2.floats(tmp.resolve("q.npy"), new float[][] {{-1, -1}}).toString(), "--radius", "4", "--format", "json");
    JsonNode r = region.get("results").get(0);
    assertThat(r.get("same").get("count").asInt()).isPositive();
    // every other region is reachable within 4 flips, so the regions listed add up to the grid
    int total = r.get("same").get("count").asInt();
    for (JsonNode g : r.get("nearby")) total += g.get("count").asInt();
    assertThat(total).isEqualTo(grid.size());
    assertThat(r.get("nearby").size()).isEqualTo(10);
  }
}
