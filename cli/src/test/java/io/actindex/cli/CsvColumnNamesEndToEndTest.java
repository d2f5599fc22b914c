package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.encode.io.SafetensorsWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * CSV files are read by position. An index built from a CSV with a header keeps its column names,
 * and a later CSV of the same kind whose header names other columns, or the same ones in another
 * order (a data frame whose columns were reordered), is refused instead of being encoded as other
 * units. scikit-learn refuses the same at predict time (scikit-learn 1.x, {@code
 * sklearn.base.BaseEstimator}: "The feature names should match those that were passed during
 * fit"). Files without a header, and files of another kind, are read by position as before.
 */
class CsvColumnNamesEndToEndTest {
  @TempDir Path tmp;

  static final int D = 6;

  /** Rows as CSV lines under {@code header} (null: none; names quoted), columns taken in the order {@code cols}. */
  private Path csv(String name, float[][] rows, List<String> header, int[] cols) {
    List<String> lines = new ArrayList<>();
    if (header != null) {
      List<String> h = new ArrayList<>();
      for (int c : cols) h.add("\"" + header.get(c).replace("\"", "\"\"") + "\""); // RFC 4180 quoting
      lines.add(String.join(",", h));
    }
    for (float[] r : rows) {
      StringBuilder sb = new StringBuilder();
      for (int c : cols) sb.append(sb.isEmpty() ? "" : ",").append(String.format(Locale.ROOT, "%.6f", r[c]));
      lines.add(sb.toString());
    }
    return Files2.text(tmp.resolve(name), lines);
  }

  private static final int[] SAME = {0, 1, 2, 3, 4, 5}, REVERSED = {5, 4, 3, 2, 1, 0};

  private static List<String> names(String prefix) {
    List<String> n = new ArrayList<>();
    for (int i = 0; i < D; i++) n.add(prefix + i);
    return n;
  }

  private static void assertRefused(Cli.Result r, Path file, String mention) {
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err()).as(r.describe()).contains(file.getFileName().toString()).contains("column 0").contains(mention);
    assertThat(r.err().strip()).as(r.describe()).doesNotContain("\n");
  }

  private static void assertHinted(Cli.Result r, Path file, String hint) {
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err().strip()).as(r.describe()).contains(file.toString() + ": the activations have layout").endsWith(hint).doesNotContain("\n");
  }

  @Test
  void activationsWhoseHeaderNamesOtherOrReorderedColumnsAreRefused() {
    SplittableRandom rnd = new SplittableRandom(11);
    float[][] train = SourcesEndToEndTest.activations(40, D, rnd), query = SourcesEndToEndTest.activations(5, D, rnd);
    List<String> h = names("h");
    Path idx = tmp.resolve("idx");
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--activations", csv("train.csv", train, h, SAME).toString());
    assertThat(b.code()).as(b.describe()).isZero();

    Cli.Result named = Cli.run("nearest", "--index", idx.toString(), "--activations", csv("q.csv", query, h, SAME).toString(), "--format", "json");
    Cli.Result bare = Cli.run("nearest", "--index", idx.toString(), "--activations", csv("q-bare.csv", query, null, SAME).toString(), "--format", "json");
    assertThat(named.code()).as(named.describe()).isZero();
    assertThat(bare.code()).as(bare.describe()).isZero();
    assertThat(named.out()).as("same columns: the header changes nothing").isEqualTo(bare.out());

    Map<String, String> before = Files2.checksums(idx);
    Path reordered = csv("q-reordered.csv", query, h, REVERSED);
    for (String cmd : List.of("nearest", "region", "add"))
      assertRefused(Cli.run(cmd, "--index", idx.toString(), "--activations", reordered.toString()), reordered, "another order");
    assertRefused(Cli.run("dupes", "--index", idx.toString(), "--radius", "1", "--against", reordered.toString()), reordered, "another order");
    Path renamed = csv("q-renamed.csv", query, names("x"), SAME);
    assertRefused(Cli.run("nearest", "--index", idx.toString(), "--activations", renamed.toString()), renamed, "without its header line");
    assertThat(Files2.checksums(idx)).as("index unchanged").isEqualTo(before);

    Cli.Result added = Cli.run("add", "--index", idx.toString(), "--activations", csv("more.csv", query, h, SAME).toString());
    assertThat(added.code()).as(added.describe()).isZero();
  }

  @Test
  void anIndexBuiltWithoutColumnNamesReadsAnyHeaderByPosition() {
    SplittableRandom rnd = new SplittableRandom(12);
    float[][] train = SourcesEndToEndTest.activations(30, D, rnd), query = SourcesEndToEndTest.activations(4, D, rnd);
    for (Path src : List.of(csv("bare.csv", train, null, SAME), Files2.floats(tmp.resolve("train.npy"), train))) {
      Path idx = tmp.resolve("idx-" + src.getFileName());
      Cli.Result b = Cli.run("build", "--out", idx.toString(), "--activations", src.toString());
      assertThat(b.code()).as(b.describe()).isZero();
      Cli.Result q = Cli.run("nearest", "--index", idx.toString(), "--activations", csv("q-any.csv", query, names("x"), REVERSED).toString());
      assertThat(q.code()).as(q.describe()).isZero();
    }
  }

  @Test
  void modelInputsAndCompareSamplesWithReorderedColumnsAreRefused() throws Exception {
    SplittableRandom rnd = new SplittableRandom(13);
    Path model = mlp("mlp.safetensors", 4, rnd);
    float[][] train = SourcesEndToEndTest.activations(30, D, rnd), query = SourcesEndToEndTest.activations(4, D, rnd);
    List<String> features = List.of("mean radius", "mean texture", "area, worst", "smoothness \"se\"", "x4", "x5");
    Path inputs = csv("inputs.csv", train, features, SAME);
    Path idx = tmp.resolve("idx");
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--model", model.toString(), "--inputs", inputs.toString());
    assertThat(b.code()).as(b.describe()).isZero();
    Path same = csv("q.csv", query, features, SAME);
    Cli.Result ok = Cli.run("nearest", "--index", idx.toString(), "--inputs", same.toString());
    assertThat(ok.code()).as(ok.describe()).isZero();
    Path reordered = csv("q-reordered.csv", query, features, REVERSED);
    assertRefused(Cli.run("nearest", "--index", idx.toString(), "--inputs", reordered.toString()), reordered, "another order");
    // the inputs given as activations: refused by their header even where widths would match
    Cli.Result asActs = Cli.run("nearest", "--index", idx.toString(), "--activations", same.toString());
    assertThat(asActs.code()).as(asActs.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(asActs.err()).as(asActs.describe()).contains("q.csv").contains("pass it with --inputs");
    assertRefused(Cli.run("compare", "--a", inputs.toString(), "--b", reordered.toString(), "--model", model.toString(), "--kind", "inputs"),
        reordered, "another order");
  }

  /**
   * The model's inputs passed as activations (or codes) by mistake, in a file with no header to tell
   * them apart: the refusal of their width says they match the model's inputs and names the option
   * that reads them so, in each command's own words ({@code --inputs}, {@code --kind inputs},
   * {@code --compare-kind inputs}); a file of another width gets no such hint.
   */
  @Test
  void inputsGivenAsActivationsGetAHintInEachCommandsWords() throws Exception {
    SplittableRandom rnd = new SplittableRandom(15);
    Path model = mlp("mlp.safetensors", 4, rnd);
    float[][] train = SourcesEndToEndTest.activations(30, D, rnd), query = SourcesEndToEndTest.activations(4, D, rnd);
    Path idx = tmp.resolve("idx");
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--model", model.toString(), "--inputs",
        Files2.floats(tmp.resolve("train.npy"), train).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    Path q = Files2.floats(tmp.resolve("q.npy"), query);
    String hint = "match the " + D + " inputs of the model the index " + idx + " keeps: if these rows are the model's inputs, pass them with ";
    Cli.Result nearest = Cli.run("nearest", "--index", idx.toString(), "--activations", q.toString());
    assertHinted(nearest, q, hint + "--inputs");
    Cli.Result compare = Cli.run("compare", "--index", idx.toString(), "--kind", "activations", "--a", q.toString(), "--b", q.toString());
    assertHinted(compare, q, hint + "--kind inputs");
    Cli.Result report = Cli.run("report", "--index", idx.toString(), "--out", tmp.resolve("r.html").toString(),
        "--compare-kind", "activations", "--compare-a", q.toString(), "--compare-b", q.toString());
    assertHinted(report, q, hint + "--compare-kind inputs");
    Path wide = Files2.floats(tmp.resolve("wide.npy"), SourcesEndToEndTest.activations(4, D + 1, rnd));
    Cli.Result other = Cli.run("nearest", "--index", idx.toString(), "--activations", wide.toString());
    assertThat(other.code()).as(other.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(other.err()).as(other.describe()).contains("wide.npy").doesNotContain("inputs of the model");
    assertThat(Cli.run("nearest", "--index", idx.toString(), "--inputs", q.toString()).code()).isZero();
  }

  /**
   * pandas writes the column numbers 0..d-1 over the columns of a {@code DataFrame(array)}: against
   * names they tell nothing (scikit-learn keeps no feature names for integer column labels either).
   * With a hidden layer as wide as the model's inputs, hidden activations saved that way were taken
   * for the inputs ("pass it with --inputs"), and named query inputs were refused against the numbers.
   * pandas keeps the numbers as labels, so against other whole numbers they are checked.
   */
  @Test
  void columnNumbersAreCheckedAgainstNumbersNotNames() throws Exception {
    SplittableRandom rnd = new SplittableRandom(14);
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    double[] w0 = new double[D * D], w1 = new double[2 * D];
    for (int i = 0; i < w0.length; i++) w0[i] = rnd.nextDouble(-1, 1);
    for (int i = 0; i < w1.length; i++) w1[i] = rnd.nextDouble(-1, 1);
    t.put("0.weight", new SafetensorsWriter.Tensor(new long[] {D, D}, w0));
    t.put("2.weight", new SafetensorsWriter.Tensor(new long[] {2, D}, w1));
    Path model = tmp.resolve("square.safetensors");
    SafetensorsWriter.write(model, t, Map.of());
    List<String> numbers = names("");
    float[][] train = SourcesEndToEndTest.activations(30, D, rnd), query = SourcesEndToEndTest.activations(4, D, rnd);
    Path idx = tmp.resolve("idx");
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--model", model.toString(), "--inputs", csv("inputs.csv", train, numbers, SAME).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    // hidden activations of the queries (ReLU of the first layer), saved by pandas with its column numbers
    float[][] hidden = new float[query.length][D];
    for (int r = 0; r < query.length; r++)
      for (int o = 0; o < D; o++) {
        double s = 0;
        for (int j = 0; j < D; j++) s += (float) w0[o * D + j] * query[r][j];
        hidden[r][o] = (float) Math.max(0, s);
      }
    Cli.Result acts = Cli.run("nearest", "--index", idx.toString(), "--activations", csv("hidden.csv", hidden, numbers, SAME).toString(), "--format", "json");
    assertThat(acts.code()).as(acts.describe()).isZero();
    Cli.Result named = Cli.run("nearest", "--index", idx.toString(), "--inputs", csv("q-named.csv", query, names("f"), SAME).toString(), "--format", "json");
    Cli.Result bare = Cli.run("nearest", "--index", idx.toString(), "--inputs", csv("q-bare.csv", query, null, SAME).toString(), "--format", "json");
    assertThat(named.code()).as(named.describe()).isZero();
    assertThat(named.out()).as("read by position, as without a header").isEqualTo(bare.out());
    // pandas keeps its numbers as the columns' labels: reordered columns carry them in another order
    // (--header yes: a first line of other whole numbers is data under auto)
    Path reordered = csv("q-reordered.csv", query, numbers, new int[] {1, 0, 2, 3, 4, 5});
    Cli.Result r = Cli.run("nearest", "--index", idx.toString(), "--inputs", reordered.toString(), "--header", "yes");
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err()).as(r.describe()).contains("q-reordered.csv").contains("another order");
  }

  /** compare --index with two files: B's header is checked against A's, as without an index, also when the index records no names. */
  @Test
  void compareSamplesAgainstAnIndexWithoutNamesAreCheckedAgainstEachOther() {
    SplittableRandom rnd = new SplittableRandom(15);
    float[][] train = SourcesEndToEndTest.activations(30, D, rnd), a = SourcesEndToEndTest.activations(20, D, rnd),
        b = SourcesEndToEndTest.activations(20, D, rnd);
    Path idx = tmp.resolve("idx");
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--activations", Files2.floats(tmp.resolve("train.npy"), train).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    List<String> h = names("h");
    Path sampleA = csv("a.csv", a, h, SAME);
    Cli.Result same = Cli.run("compare", "--index", idx.toString(), "--a", sampleA.toString(), "--b", csv("b.csv", b, h, SAME).toString(),
        "--permutations", "20");
    assertThat(same.code()).as(same.describe()).isZero();
    Path reordered = csv("b-reordered.csv", b, h, REVERSED);
    Cli.Result r = Cli.run("compare", "--index", idx.toString(), "--a", sampleA.toString(), "--b", reordered.toString(), "--permutations", "20");
    assertRefused(r, reordered, "another order");
    assertThat(r.err()).as(r.describe()).contains("sample A");
  }

  /** A two-layer MLP (D inputs, {@code hidden} units, 2 outputs) with random weights, as safetensors. */
  private Path mlp(String name, int hidden, SplittableRandom rnd) throws Exception {
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    double[] w0 = new double[hidden * D], w1 = new double[2 * hidden];
    for (int i = 0; i < w0.length; i++) w0[i] = rnd.nextDouble(-1, 1);
    for (int i = 0; i < w1.length; i++) w1[i] = rnd.nextDouble(-1, 1);
    t.put("0.weight", new SafetensorsWriter.Tensor(new long[] {hidden, D}, w0));
    t.put("2.weight", new SafetensorsWriter.Tensor(new long[] {2, hidden}, w1));
    Path model = tmp.resolve(name);
    SafetensorsWriter.write(model, t, Map.of());
    return model;
  }

  /** A number in a command's JSON output, by its path of member names. */
  private static long jsonNumber(Cli.Result r, String... path) {
    assertThat(r.code()).as(r.describe()).isZero();
    Object v = io.actindex.encode.io.Json.parse(r.out());
    for (String name : path) v = ((Map<?, ?>) v).get(name);
    return ((Number) v).longValue();
  }

  /** Rows without a header whose first row is 1, 2, ..., D: evenly spaced numbers, which --header auto refuses. */
  private Path undecided(String name, float[][] rows) {
    for (int c = 0; c < D; c++) rows[0][c] = c + 1;
    List<String> lines = new ArrayList<>();
    for (float[] r : rows) {
      StringBuilder sb = new StringBuilder();
      for (float v : r) sb.append(sb.isEmpty() ? "" : ",").append(v == Math.rint(v) ? Integer.toString((int) v) : Float.toString(v));
      lines.add(sb.toString());
    }
    return Files2.text(tmp.resolve(name), lines);
  }

  /**
   * compare, dupes --against, fidelity, ood eval and report take --header as the query commands do: a first
   * line --header auto cannot decide on is refused naming the option, and --header no (data) or yes
   * (a header) reads it, for every CSV file the command reads: one row more or fewer.
   */
  @Test
  void everyCommandThatReadsCsvDataTakesHeader() throws Exception {
    SplittableRandom rnd = new SplittableRandom(16);
    Path undecided = undecided("undecided.csv", SourcesEndToEndTest.activations(20, D, rnd));
    Path other = Files2.floats(tmp.resolve("other.npy"), SourcesEndToEndTest.activations(20, D, rnd)); // --header applies to CSV files only
    Path train = Files2.floats(tmp.resolve("train.npy"), SourcesEndToEndTest.activations(40, D, rnd));
    Path idx = tmp.resolve("idx");
    for (String[] args : List.of(new String[] {"build", "--out", idx.toString(), "--activations", train.toString()},
        new String[] {"ood", "calibrate", "--index", idx.toString(), "--activations", Files2.floats(tmp.resolve("cal.npy"),
            SourcesEndToEndTest.activations(20, D, rnd)).toString()})) {
      Cli.Result r = Cli.run(args);
      assertThat(r.code()).as(r.describe()).isZero();
    }
    Path modelIdx = tmp.resolve("model-idx");
    Cli.Result built = Cli.run("build", "--out", modelIdx.toString(), "--model", mlp("mlp.safetensors", 4, rnd).toString(), "--inputs",
        undecided.toString(), "--header", "no");
    assertThat(built.code()).as(built.describe()).isZero();

    record Use(String[] args, String... rows) {}
    String u = undecided.toString();
    List<Use> uses = List.of(
        new Use(new String[] {"compare", "--a", u, "--b", other.toString(), "--permutations", "20"}, "a", "rows"),
        new Use(new String[] {"compare", "--a", other.toString(), "--b", u, "--permutations", "20"}, "b", "rows"),
        new Use(new String[] {"dupes", "--index", idx.toString(), "--radius", "1", "--against", u}, "summary", "rows"),
        new Use(new String[] {"fidelity", "--activations", u, "-k", "3"}, "examples"),
        new Use(new String[] {"ood", "eval", "--index", idx.toString(), "--in", u, "--out", other.toString(), "--kind", "activations"}, "in"),
        new Use(new String[] {"ood", "eval", "--index", idx.toString(), "--in", other.toString(), "--out", u, "--kind", "activations"}, "out"),
        new Use(new String[] {"ood", "eval", "--index", idx.toString(), "--in", other.toString(), "--out", other.toString(), "--kind",
            "activations", "--in-floats", other.toString(), "--out-floats", other.toString(), "--train-floats", u}),
        new Use(new String[] {"fidelity", "--index", modelIdx.toString(), "--inputs", u, "-k", "3"}),
        new Use(new String[] {"report", "--index", idx.toString(), "--out", tmp.resolve("page.html").toString(), "--compare-a", u,
            "--compare-b", other.toString()}));
    for (Use use : uses) {
      Cli.Result auto = Cli.run(use.args());
      assertThat(auto.code()).as(auto.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(auto.err()).as(auto.describe()).contains("undecided.csv").contains("--header yes");
      List<String> args = new ArrayList<>(List.of(use.args()));
      args.addAll(List.of("--format", "json", "--header", "no"));
      Cli.Result data = Cli.run(args.toArray(new String[0]));
      assertThat(data.code()).as(data.describe()).isZero();
      if (use.rows().length == 0) continue; // floats, or inputs that must be the index's 20 rows
      assertThat(jsonNumber(data, use.rows())).as(data.describe()).isEqualTo(20);
      args.set(args.size() - 1, "yes");
      assertThat(jsonNumber(Cli.run(args.toArray(new String[0])), use.rows())).as("--header yes: the first line is not a row").isEqualTo(19);
    }
  }

  /**
   * Float files that one command reads as activations of the same units (compare's --a-floats and
   * --b-floats; ood eval's --in-floats, --out-floats and --train-floats) are read by position, so
   * their headers must name the same columns in the same order, as compare's --a and --b must.
   */
  @Test
  void floatFilesWhoseHeadersDisagreeAreRefused() {
    SplittableRandom rnd = new SplittableRandom(17);
    float[][] a = SourcesEndToEndTest.activations(20, D, rnd), b = SourcesEndToEndTest.activations(20, D, rnd),
        train = SourcesEndToEndTest.activations(40, D, rnd);
    List<String> h = names("h");
    Path aNpy = Files2.floats(tmp.resolve("a.npy"), a), bNpy = Files2.floats(tmp.resolve("b.npy"), b);
    Path aCsv = csv("a.csv", a, h, SAME), bCsv = csv("b.csv", b, h, SAME), bReordered = csv("b-reordered.csv", b, h, REVERSED);

    String[] compare = {"compare", "--a", aNpy.toString(), "--b", bNpy.toString(), "--permutations", "20", "--a-floats", aCsv.toString(),
        "--b-floats"};
    Cli.Result refused = Cli.run(concat(compare, bReordered.toString()));
    assertRefused(refused, bReordered, "another order");
    assertThat(refused.err()).as(refused.describe()).contains("a.csv").contains("float sample A");
    for (Path agrees : List.of(bCsv, csv("b-bare.csv", b, null, SAME))) {
      Cli.Result ok = Cli.run(concat(compare, agrees.toString()));
      assertThat(ok.code()).as(ok.describe()).isZero();
    }
    // pandas' column numbers, reordered: a first line of other whole numbers is data under auto, a header with --header yes
    Path aNumbered = csv("a-numbered.csv", a, names(""), SAME), bNumbered = csv("b-numbered.csv", b, names(""), new int[] {1, 0, 2, 3, 4, 5});
    String[] numbered = {"compare", "--a", aNpy.toString(), "--b", bNpy.toString(), "--permutations", "20", "--a-floats",
        aNumbered.toString(), "--b-floats", bNumbered.toString(), "--header", "yes"};
    assertRefused(Cli.run(numbered), bNumbered, "another order");

    Path idx = tmp.resolve("idx");
    for (String[] args : List.of(new String[] {"build", "--out", idx.toString(), "--activations", Files2.floats(tmp.resolve("train.npy"), train).toString()},
        new String[] {"ood", "calibrate", "--index", idx.toString(), "--activations", aNpy.toString()})) {
      Cli.Result r = Cli.run(args);
      assertThat(r.code()).as(r.describe()).isZero();
    }
    Map<String, String> before = Files2.checksums(idx);
    Path trainCsv = csv("train.csv", train, h, SAME), trainReordered = csv("train-reordered.csv", train, h, REVERSED);
    Path roc = tmp.resolve("roc.csv"), html = tmp.resolve("eval.html");
    String[] eval = {"ood", "eval", "--index", idx.toString(), "--in", aNpy.toString(), "--out", bNpy.toString(), "--roc", roc.toString(),
        "--html", html.toString()};
    Cli.Result againstTrain = Cli.run(concat(eval, "--in-floats", aCsv.toString(), "--out-floats", bCsv.toString(), "--train-floats",
        trainReordered.toString()));
    assertRefused(againstTrain, aCsv, "another order");
    assertThat(againstTrain.err()).as(againstTrain.describe()).contains("train-reordered.csv");
    // training floats without a header: in and out are checked against each other
    Cli.Result againstIn = Cli.run(concat(eval, "--in-floats", aCsv.toString(), "--out-floats", bReordered.toString(), "--train-floats",
        csv("train-bare.csv", train, null, SAME).toString()));
    assertRefused(againstIn, bReordered, "another order");
    assertThat(againstIn.err()).as(againstIn.describe()).contains("--in-floats").contains("a.csv");
    assertThat(roc).as("nothing written").doesNotExist();
    assertThat(html).as("nothing written").doesNotExist();
    assertThat(Files2.checksums(idx)).as("index unchanged").isEqualTo(before);
    Cli.Result ok = Cli.run(concat(eval, "--in-floats", aCsv.toString(), "--out-floats", bCsv.toString(), "--train-floats", trainCsv.toString()));
    assertThat(ok.code()).as(ok.describe()).isZero();
    assertThat(roc).exists();
  }

  /** ood eval's --in and --out against an index built from .npy (no names recorded): checked against each other, as compare's samples. */
  @Test
  void oodEvalInputsAgainstAnIndexWithoutNamesAreCheckedAgainstEachOther() {
    SplittableRandom rnd = new SplittableRandom(18);
    float[][] in = SourcesEndToEndTest.activations(20, D, rnd), out = SourcesEndToEndTest.activations(20, D, rnd);
    Path idx = tmp.resolve("idx");
    for (String[] args : List.of(new String[] {"build", "--out", idx.toString(), "--activations",
        Files2.floats(tmp.resolve("train.npy"), SourcesEndToEndTest.activations(40, D, rnd)).toString()},
        new String[] {"ood", "calibrate", "--index", idx.toString(), "--activations", Files2.floats(tmp.resolve("cal.npy"), in).toString()})) {
      Cli.Result r = Cli.run(args);
      assertThat(r.code()).as(r.describe()).isZero();
    }
    List<String> h = names("h");
    Path inCsv = csv("in.csv", in, h, SAME), roc = tmp.resolve("roc.csv");
    Path reordered = csv("out-reordered.csv", out, h, REVERSED);
    Cli.Result r = Cli.run("ood", "eval", "--index", idx.toString(), "--in", inCsv.toString(), "--out", reordered.toString(), "--roc", roc.toString());
    assertRefused(r, reordered, "another order");
    assertThat(r.err()).as(r.describe()).contains("--in").contains("in.csv");
    assertThat(roc).as("nothing written").doesNotExist();
    Cli.Result ok = Cli.run("ood", "eval", "--index", idx.toString(), "--in", inCsv.toString(), "--out", csv("out.csv", out, h, SAME).toString(),
        "--roc", roc.toString());
    assertThat(ok.code()).as(ok.describe()).isZero();
    assertThat(roc).exists();
  }

  private static String[] concat(String[] head, String... tail) {
    List<String> all = new ArrayList<>(List.of(head));
    all.addAll(List.of(tail));
    return all.toArray(new String[0]);
  }
}
