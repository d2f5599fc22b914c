package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.encode.io.SafetensorsWriter;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Every bad-input case of the encode issue, and queries whose width or layout does not fit the
 * index, through the command line: exit code 2, one line on stderr naming the file and the
 * problem, no stack trace, and the index folder byte-for-byte unchanged (a failed build leaves no
 * index behind).
 */
class BadInputEndToEndTest {
  @TempDir Path tmp;
  Path idx;
  Path model;

  static final String F32_8 = "{'descr': '<f4', 'fortran_order': False, 'shape': (%d, 8), }";

  @BeforeEach
  void buildIndex() throws Exception {
    SplittableRandom rnd = new SplittableRandom(7);
    idx = tmp.resolve("idx");
    Path acts = Files2.floats(tmp.resolve("acts.npy"), SourcesEndToEndTest.activations(40, 8, rnd));
    Cli.Result r = Cli.run("build", "--out", idx.toString(), "--activations", acts.toString());
    assertThat(r.code()).as(r.describe()).isZero();
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("0.weight", new SafetensorsWriter.Tensor(new long[] {4, 3}, new double[12]));
    t.put("0.bias", new SafetensorsWriter.Tensor(new long[] {4}, new double[] {1, -1, 1, -1}));
    t.put("2.weight", new SafetensorsWriter.Tensor(new long[] {2, 4}, new double[8]));
    t.put("2.bias", new SafetensorsWriter.Tensor(new long[] {2}, new double[2]));
    model = tmp.resolve("mlp.safetensors");
    SafetensorsWriter.write(model, t, Map.of());
  }

  /** A bad file and the failure it must produce. */
  record Case(String name, Path file, String mustMention) {}

  private List<Case> badActivations() {
    List<Case> cases = new ArrayList<>();
    cases.add(new Case("wrong magic",
        Files2.rawNpy(tmp.resolve("magic.npy"), new byte[] {(byte) 0x93, 'N', 'U', 'M', 'P', 'X'}, F32_8.formatted(1),
            Files2.f32(new float[8])), null));
    cases.add(new Case("unsupported dtype (complex64)",
        Files2.rawNpy(tmp.resolve("complex.npy"), Files2.NPY_MAGIC, "{'descr': '<c8', 'fortran_order': False, 'shape': (2, 8), }",
            new byte[2 * 8 * 8]), null));
    // NumPy's read_array_header (numpy/lib/format.py) refuses a shape that is not a tuple
    cases.add(new Case("shape written as a list",
        Files2.rawNpy(tmp.resolve("listshape.npy"), Files2.NPY_MAGIC, "{'descr': '<f4', 'fortran_order': False, 'shape': [2, 8], }",
            Files2.f32(new float[2 * 8])), "shape"));
    cases.add(new Case("header says more rows than the file holds",
        Files2.rawNpy(tmp.resolve("short.npy"), Files2.NPY_MAGIC, F32_8.formatted(4), Files2.f32(new float[3 * 8])), null));
    cases.add(new Case("header says fewer rows than the file holds",
        Files2.rawNpy(tmp.resolve("long.npy"), Files2.NPY_MAGIC, F32_8.formatted(2), Files2.f32(new float[3 * 8])), null));
    cases.add(new Case("truncated in the middle of a value",
        Files2.rawNpy(tmp.resolve("cut.npy"), Files2.NPY_MAGIC, F32_8.formatted(2),
            java.util.Arrays.copyOf(Files2.f32(new float[2 * 8]), 2 * 8 * 4 - 3)), null));
    float[][] nan = new float[3][8];
    nan[2][5] = Float.NaN;
    cases.add(new Case("NaN", Files2.floats(tmp.resolve("nan.npy"), nan), "row"));
    float[][] inf = new float[3][8];
    inf[1][0] = Float.NEGATIVE_INFINITY;
    cases.add(new Case("infinity", Files2.floats(tmp.resolve("inf.npy"), inf), "row"));
    cases.add(new Case("width does not match the index (9 columns, index has 8)",
        Files2.floats(tmp.resolve("wide.npy"), new float[3][9]), "the activations have layout act:9 (9 columns, one per unit)"));
    return cases;
  }

  private static void assertRefused(Cli.Result r, Case c) {
    String what = c.name() + "\n" + r.describe();
    assertThat(r.code()).as(what).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err()).as(what).contains(c.file().getFileName().toString());
    assertThat(r.err().strip()).as(what + ": one line").doesNotContain("\n");
    assertThat(r.err()).as(what).doesNotContain("\tat ").doesNotContain("internal error");
    if (c.mustMention() != null) assertThat(r.err().toLowerCase()).as(what).contains(c.mustMention());
    assertThat(r.out()).as(what).isEmpty();
  }

  @Test
  void badActivationsAreRefusedByNearestRegionAndAddLeavingTheIndexUnchanged() {
    for (Case c : badActivations()) {
      Map<String, String> before = Files2.checksums(idx);
      assertRefused(Cli.run("nearest", "--index", idx.toString(), "--activations", c.file().toString(), "--format", "json"), c);
      assertRefused(Cli.run("region", "--index", idx.toString(), "--activations", c.file().toString()), c);
      assertRefused(Cli.run("add", "--index", idx.toString(), "--activations", c.file().toString()), c);
      assertThat(Files2.checksums(idx)).as(c.name() + ": index unchanged").isEqualTo(before);
    }
  }

  @Test
  void badActivationsAreRefusedByBuildLeavingNoIndex() throws Exception {
    for (Case c : badActivations()) {
      if (c.name().startsWith("width")) continue; // any width is fine for a new index
      Path out = tmp.resolve("new-" + c.file().getFileName());
      assertRefused(Cli.run("build", "--out", out.toString(), "--activations", c.file().toString()), c);
      assertThat(!Files.exists(out) || Files2.checksums(out).isEmpty()).as(c.name() + ": nothing written").isTrue();
    }
  }

  @Test
  void inputsThatDoNotFitTheModelAreRefused() {
    Path wide = Files2.floats(tmp.resolve("inputs4.npy"), new float[5][4]);
    Case c = new Case("inputs have 4 columns, the model takes 3", wide, null);
    Path out = tmp.resolve("m-idx");
    assertRefused(Cli.run("build", "--out", out.toString(), "--model", model.toString(), "--inputs", wide.toString()), c);
    assertThat(!Files.exists(out) || Files2.checksums(out).isEmpty()).isTrue();
    // a data frame written with its label column (scikit-learn's frames end with 'target'): the extra column is named
    Path frame = Files2.text(tmp.resolve("frame.csv"), List.of("f0,f1,f2,target", "0.5,1,2,0", "1,0.5,2,1"));
    Cli.Result f = Cli.run("build", "--out", out.toString(), "--model", model.toString(), "--inputs", frame.toString());
    assertRefused(f, new Case("a label column beside the features", frame, "one column too many"));
    assertThat(f.err()).contains("last 'target'");
    assertThat(!Files.exists(out) || Files2.checksums(out).isEmpty()).isTrue();
    // and a model-built index refuses the same inputs as queries or additions
    Path good = Files2.floats(tmp.resolve("inputs3.npy"), new float[5][3]);
    Cli.Result b = Cli.run("build", "--out", out.toString(), "--model", model.toString(), "--inputs", good.toString());
    assertThat(b.code()).as(b.describe()).isZero();
    Map<String, String> before = Files2.checksums(out);
    assertRefused(Cli.run("nearest", "--index", out.toString(), "--inputs", wide.toString()), c);
    assertRefused(Cli.run("add", "--index", out.toString(), "--inputs", wide.toString()), c);
    // 4 columns are the model's 4 hidden units: the hidden activations given as --inputs get the way out, as the reverse slip
    // (inputs given as --activations) does; another width gets no such hint (a new user's run on the digits gave 153 for 64)
    assertThat(Cli.run("nearest", "--index", out.toString(), "--inputs", wide.toString()).err())
        .contains("; 4 is the number of the model's hidden units in the code layers: if these rows are its hidden activations, pass them with --activations");
    Path five = Files2.floats(tmp.resolve("inputs5.npy"), new float[5][5]);
    assertThat(Cli.run("nearest", "--index", out.toString(), "--inputs", five.toString()).err()).contains("takes 3").doesNotContain("hidden units");
    assertThat(Files2.checksums(out)).isEqualTo(before);
  }

  @Test
  void safetensorsHeaderPointingOutsideTheFileIsRefused() {
    String header = "{\"0.weight\":{\"dtype\":\"F32\",\"shape\":[4,3],\"data_offsets\":[0,48]},"
        + "\"0.bias\":{\"dtype\":\"F32\",\"shape\":[4],\"data_offsets\":[48,4000]}}";
    byte[] json = header.getBytes(StandardCharsets.UTF_8);
    ByteBuffer b = ByteBuffer.allocate(8 + json.length + 64).order(ByteOrder.LITTLE_ENDIAN);
    b.putLong(json.length).put(json);
    Path bad = Files2.write(tmp.resolve("outside.safetensors"), b.array());
    Path inputs = Files2.floats(tmp.resolve("in.npy"), new float[2][3]);
    Path out = tmp.resolve("s-idx");
    assertRefused(Cli.run("build", "--out", out.toString(), "--model", bad.toString(), "--inputs", inputs.toString()),
        new Case("data_offsets past the end", bad, null));
    assertThat(!Files.exists(out) || Files2.checksums(out).isEmpty()).isTrue();
  }

  @Test
  void queryCodesOfTheWrongWidthAreRefused() {
    boolean[][] codes = new boolean[3][12];
    Path c = Files2.bits(tmp.resolve("codes12.npy"), codes);
    Case k = new Case("12-bit codes for an 8-bit index", c, null);
    Map<String, String> before = Files2.checksums(idx);
    assertRefused(Cli.run("nearest", "--index", idx.toString(), "--codes", c.toString()), k);
    assertRefused(Cli.run("add", "--index", idx.toString(), "--codes", c.toString()), k);
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  @Test
  void metadataThatDoesNotFitIsRefusedAndNamesTheCsv() {
    Path acts = Files2.floats(tmp.resolve("more.npy"), new float[3][8]);
    Path csv = Files2.text(tmp.resolve("more.csv"), List.of("key,label", "x1,a", "x2,b"));
    Map<String, String> before = Files2.checksums(idx);
    assertRefused(Cli.run("add", "--index", idx.toString(), "--activations", acts.toString(), "--meta", csv.toString()),
        new Case("2 metadata rows for 3 examples", csv, null));
    Path dup = Files2.text(tmp.resolve("dup.csv"), List.of("key,label", "x1,a", "x1,b", "x3,c"));
    assertRefused(Cli.run("add", "--index", idx.toString(), "--activations", acts.toString(), "--meta", dup.toString()),
        new Case("duplicate key", dup, null));
    // row-44 is the key id 44 would get if added without metadata (these rows get ids 40..42)
    Path reserved = Files2.text(tmp.resolve("reserved.csv"), List.of("key,label", "x1,a", "row-44,b", "x3,c"));
    Cli.Result r = Cli.run("add", "--index", idx.toString(), "--activations", acts.toString(), "--meta", reserved.toString());
    assertRefused(r, new Case("a key kept for an id to come", reserved, null));
    assertThat(r.err()).contains("data row 2: key 'row-44'");
    Path built = tmp.resolve("built");
    Cli.Result b = Cli.run("build", "--out", built.toString(), "--activations", acts.toString(), "--meta", reserved.toString());
    assertRefused(b, new Case("a key kept for an id to come, build", reserved, null));
    assertThat(built).doesNotExist();
    // 8 examples of 3 units saved as 3 rows of 8 (units by examples): the metadata's 8 rows say so
    Path transposed = Files2.floats(tmp.resolve("transposed.npy"), new float[3][8]);
    List<String> eight = new ArrayList<>(List.of("key"));
    for (int i = 0; i < 8; i++) eight.add("t" + i);
    Path meta8 = Files2.text(tmp.resolve("meta8.csv"), eight);
    Cli.Result t = Cli.run("build", "--out", built.toString(), "--activations", transposed.toString(), "--meta", meta8.toString());
    assertRefused(t, new Case("activations saved transposed", meta8, "transposed"));
    assertThat(built).doesNotExist();
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  @Test
  void metadataRefusedByTheIndexNamesTheCsvAndItsDataRow() {
    // refusals that need the index (a column's kind, ids not given out yet) used to name neither
    // the file nor its rows as the CSV counts them ("metadata row 0")
    Path acts = Files2.floats(tmp.resolve("more.npy"), new float[3][8]);
    Path numbers = Files2.text(tmp.resolve("numbers.csv"), List.of("key,rpm", "x1,100", "x2,200", "x3,300"));
    Cli.Result ok = Cli.run("add", "--index", idx.toString(), "--activations", acts.toString(), "--meta", numbers.toString());
    assertThat(ok.code()).as(ok.describe()).isZero();
    Map<String, String> before = Files2.checksums(idx);
    Path text = Files2.text(tmp.resolve("text.csv"), List.of("key,rpm", "y1,100", "y2,fast", "y3,300"));
    assertRefused(Cli.run("add", "--index", idx.toString(), "--activations", acts.toString(), "--meta", text.toString()),
        new Case("text in a number column", text, "data row 2"));
    Path ahead = Files2.text(tmp.resolve("ahead.csv"), List.of("key", "z1", "z2", "row-90"));
    assertRefused(Cli.run("add", "--index", idx.toString(), "--activations", acts.toString(), "--meta", ahead.toString()),
        new Case("key of an id not given out yet", ahead, "data row 3"));
    assertThat(Files2.checksums(idx)).isEqualTo(before);
    Path out = tmp.resolve("new-idx");
    assertRefused(Cli.run("build", "--out", out.toString(), "--activations", acts.toString(), "--meta", ahead.toString()),
        new Case("key of an id not given out yet, build", ahead, "data row 3"));
    assertThat(out).doesNotExist();
  }

  @Test
  void badWhereAndUnknownLayerAreRefusedWithoutAStackTrace() {
    Path q = Files2.floats(tmp.resolve("q.npy"), new float[1][8]);
    Cli.Result r = Cli.run("nearest", "--index", idx.toString(), "--activations", q.toString(), "--where", "label = ");
    assertThat(r.code()).as(r.describe()).isEqualTo(2);
    assertThat(r.err()).as(r.describe()).contains("where").doesNotContain("\tat ");
    r = Cli.run("nearest", "--index", idx.toString(), "--activations", q.toString(), "--layers", "nope");
    assertThat(r.code()).as(r.describe()).isEqualTo(2);
    assertThat(r.err()).as(r.describe()).contains("nope");
    r = Cli.run("nearest", "--index", tmp.resolve("no-such-index").toString(), "--activations", q.toString());
    assertThat(r.code()).as(r.describe()).isEqualTo(2);
    assertThat(r.err()).as(r.describe()).contains("no-such-index");
  }
  /** Little-endian float64 bytes. */
  private static byte[] f64(double... v) {
    ByteBuffer b = ByteBuffer.allocate(8 * v.length).order(ByteOrder.LITTLE_ENDIAN);
    for (double x : v) b.putDouble(x);
    return b.array();
  }

  @Test
  void float64ActivationsBeyondFloat32AreRefusedWhereTheyWouldBeKept() {
    // codes from 1e39 are fine, but the kept magnitudes are float32: this was an internal error (exit 1)
    double[] v = new double[3 * 8];
    v[8 + 2] = 1e39;
    Path big = Files2.rawNpy(tmp.resolve("big64.npy"), Files2.NPY_MAGIC, "{'descr': '<f8', 'fortran_order': False, 'shape': (3, 8), }", f64(v));
    Case c = new Case("a float64 value past float32", big, "row 1, column 2");
    Path out = tmp.resolve("big-idx");
    assertRefused(Cli.run("build", "--out", out.toString(), "--activations", big.toString()), c);
    assertThat(!Files.exists(out) || Files2.checksums(out).isEmpty()).isTrue();
    Map<String, String> before = Files2.checksums(idx);
    assertRefused(Cli.run("add", "--index", idx.toString(), "--activations", big.toString()), c);
    assertRefused(Cli.run("fidelity", "--activations", big.toString()), c);
    assertThat(Files2.checksums(idx)).isEqualTo(before);
    Cli.Result off = Cli.run("build", "--out", out.toString(), "--activations", big.toString(), "--magnitudes", "off");
    assertThat(off.code()).as(off.describe()).isZero();
  }

  @Test
  void modelInputsThatOverflowTheForwardPassAreRefused() {
    // 1e300 * 1e38 overflows double: the hidden unit became NaN or infinity and its code bit was made up
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    t.put("0.weight", new SafetensorsWriter.Tensor(new long[] {2, 3}, new double[] {1e38, -1e38, 0, 1, 1, 1}));
    t.put("2.weight", new SafetensorsWriter.Tensor(new long[] {1, 2}, new double[] {1, 1}));
    Path big = Files2.write(tmp.resolve("big.safetensors"), new byte[0]);
    try {
      SafetensorsWriter.write(big, t, Map.of());
    } catch (java.io.IOException e) {
      throw new java.io.UncheckedIOException(e);
    }
    Path inputs = Files2.rawNpy(tmp.resolve("huge-in.npy"), Files2.NPY_MAGIC, "{'descr': '<f8', 'fortran_order': False, 'shape': (2, 3), }",
        f64(1, 2, 3, 1e300, -1e300, 0));
    Path out = tmp.resolve("o-idx");
    assertRefused(Cli.run("build", "--out", out.toString(), "--model", big.toString(), "--inputs", inputs.toString(), "--magnitudes", "off"),
        new Case("hidden unit overflows", inputs, "row 1"));
    assertThat(!Files.exists(out) || Files2.checksums(out).isEmpty()).isTrue();
  }

  @Test
  void aFolderWhereAFileBelongsIsCalledAFolder() throws Exception {
    Path folder = Files.createDirectory(tmp.resolve("acts-folder.npy"));
    Case c = new Case("a folder as activations", folder, "is a folder");
    assertRefused(Cli.run("build", "--out", tmp.resolve("f-idx").toString(), "--activations", folder.toString()), c);
    assertRefused(Cli.run("nearest", "--index", idx.toString(), "--activations", folder.toString()), c);
    assertRefused(Cli.run("build", "--out", tmp.resolve("g-idx").toString(), "--model", folder.toString(), "--inputs", folder.toString()), c);
  }

  @Test
  void aDeviceOrPipeIsNotCalledMissing() {
    // a process substitution (--codes <(...)) is a pipe under /dev/fd; /dev/null was "no such file"
    Path device = Path.of("/dev/null");
    org.junit.jupiter.api.Assumptions.assumeTrue(Files.exists(device) && !Files.isRegularFile(device));
    Case c = new Case("a device as codes", device, "not a regular file");
    assertRefused(Cli.run("nearest", "--index", idx.toString(), "--codes", device.toString()), c);
    assertRefused(Cli.run("build", "--out", tmp.resolve("d-idx").toString(), "--activations", device.toString()), c);
  }

  /**
   * An empty path (an unset shell variable: {@code --out "$OUT"}) is refused naming its option; it
   * was the current folder: {@code build --out ""} built an index there, {@code --keys ""} said
   * "keys file  cannot be read: Is a directory".
   */
  @Test
  void anEmptyPathIsRefusedNamingItsOption() {
    Path codes = Files2.bits(tmp.resolve("c.npy"), new boolean[4][8]);
    Map<String, String> before = Files2.checksums(idx);
    String[][] cases = {
        {"--out", "build", "--out", "", "--codes", codes.toString()},
        {"--codes", "build", "--out", tmp.resolve("e-idx").toString(), "--codes", ""},
        {"--index", "info", "--index", ""},
        {"--keys", "delete", "--index", idx.toString(), "--keys", ""},
        {"--meta", "add", "--index", idx.toString(), "--codes", codes.toString(), "--meta", ""},
        {"--codes", "nearest", "--index", idx.toString(), "--codes", ""}};
    for (String[] c : cases) {
      Cli.Result r = Cli.run(java.util.Arrays.copyOfRange(c, 1, c.length));
      assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(r.err()).as(r.describe()).contains(c[0]).contains("empty").doesNotContain("\tat ");
      assertThat(r.err().strip()).as(r.describe()).doesNotContain("\n");
    }
    assertThat(tmp.resolve("e-idx")).doesNotExist();
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  /**
   * An index built from codes records no rule that made them from activations: adding activations
   * (binarized by the default rule) or model inputs to it is refused, naming the index, the file and
   * what to add instead. Codes still go in.
   */
  @Test
  void addingActivationsToAnIndexBuiltFromCodesIsRefused() {
    SplittableRandom rnd = new SplittableRandom(9);
    float[][] acts = SourcesEndToEndTest.activations(6, 8, rnd);
    Path cidx = tmp.resolve("cidx"), file = Files2.floats(tmp.resolve("more.npy"), acts);
    Cli.Result built = Cli.run("build", "--out", cidx.toString(), "--codes",
        Files2.bits(tmp.resolve("codes.npy"), SourcesEndToEndTest.binarize(acts, 0)).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    Map<String, String> before = Files2.checksums(cidx);
    for (String option : new String[] {"--activations", "--inputs"}) {
      Cli.Result r = Cli.run("add", "--index", cidx.toString(), option, file.toString());
      assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(r.err()).as(r.describe()).contains(cidx.toString()).contains(file.toString()).contains("built from codes")
          .contains("--codes").doesNotContain("give activations");
      assertThat(r.err().strip()).as(r.describe()).doesNotContain("\n");
    }
    assertThat(Files2.checksums(cidx)).isEqualTo(before);
    Cli.Result codes = Cli.run("add", "--index", cidx.toString(), "--codes",
        Files2.bits(tmp.resolve("more-codes.npy"), SourcesEndToEndTest.binarize(acts, 0)).toString());
    assertThat(codes.code()).as(codes.describe()).isZero();
    // a query only reads: answered, with a note that the activations were binarized by the default
    // rule; the same rows as codes answer alike and without the note
    Map<String, String> grown = Files2.checksums(cidx);
    Cli.Result byActs = Cli.run("nearest", "--index", cidx.toString(), "--activations", file.toString(), "-k", "3", "--format", "csv");
    Cli.Result byCodes = Cli.run("nearest", "--index", cidx.toString(), "--codes", tmp.resolve("more-codes.npy").toString(), "-k", "3",
        "--format", "csv");
    assertThat(byActs.code()).as(byActs.describe()).isZero();
    assertThat(byActs.err()).as(byActs.describe()).contains("built from codes").contains("default rule").contains(file.toString());
    assertThat(byCodes.err()).as(byCodes.describe()).doesNotContain("built from codes");
    assertThat(byActs.out()).as(byActs.describe()).isEqualTo(byCodes.out());
    assertThat(Files2.checksums(cidx)).isEqualTo(grown);
  }

  /**
   * An empty or blank filter (an unset shell variable) is refused by every command that takes one,
   * naming the option: query commands read it as "every example" and delete refused it.
   */
  @Test
  void anEmptyWhereIsRefusedByEveryCommand() {
    Path acts = Files2.floats(tmp.resolve("q.npy"), new float[4][8]);
    Map<String, String> before = Files2.checksums(idx);
    String i = idx.toString(), q = acts.toString();
    for (String blank : new String[] {"", "  ", "\t"}) {
      String[][] cases = {
          {"--where", "leave --where out", "nearest", "--index", i, "--activations", q, "--where", blank},
          {"--where", "leave --where out", "region", "--index", i, "--activations", q, "--where", blank},
          {"--where", "leave --where out", "dupes", "--index", i, "--radius", "1", "--where", blank},
          {"--where", "leave --where out", "dupes", "--index", i, "--radius", "1", "--against", q, "--where", blank},
          {"--where", "never deletes every example", "delete", "--index", i, "--where", blank},
          {"--a-where", "--a FILE", "compare", "--index", i, "--a-where", blank, "--b", q},
          {"--b-where", "--b FILE", "compare", "--index", i, "--a", q, "--b-where", blank}};
      for (String[] c : cases) {
        Cli.Result r = Cli.run(java.util.Arrays.copyOfRange(c, 2, c.length));
        assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
        assertThat(r.err()).as(r.describe()).contains(c[0] + ": the expression is empty").contains(c[1]).doesNotContain("internal error");
        assertThat(r.err().strip()).as(r.describe()).doesNotContain("\n");
        assertThat(r.out()).as(r.describe()).isEmpty();
      }
    }
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  /** Options that cannot apply: exit 2 naming the option, nothing written (they were an internal error or ignored). */
  @Test
  void optionsThatCannotApplyAreRefused() {
    Map<String, String> before = Files2.checksums(idx);
    Path codes = Files2.bits(tmp.resolve("c.npy"), new boolean[4][8]);
    Path acts = Files2.floats(tmp.resolve("a.npy"), new float[4][8]);
    String[][] cases = {
        {"--median", "build", "--out", tmp.resolve("m-idx").toString(), "--codes", codes.toString(), "--median"},
        {"--code-layout", "compare", "--a", acts.toString(), "--b", acts.toString(), "--code-layout", "x:4,y:4"},
        {"--threshold", "compare", "--a", codes.toString(), "--b", codes.toString(), "--kind", "codes", "--threshold", "0.5"},
        // named --radius (the dupes option) and checked only after the page's slowest section
        {"--dupes-radius", "report", "--index", idx.toString(), "--out", tmp.resolve("r1.html").toString(), "--dupes-radius", "-1"},
        {"--dupes-radius", "report", "--index", idx.toString(), "--out", tmp.resolve("r2.html").toString(), "--dupes-radius", "9"},
        // the index holds no model: said "give activations or codes", which fidelity --index does not take
        {"--inputs", "fidelity", "--index", idx.toString(), "--inputs", acts.toString()},
        // the same for ood eval's --kind inputs ('--kind activations' or 'codes' is what it takes)
        // ran out of memory (exit 1, advising more memory)
        {"--pairs", "fidelity", "--activations", acts.toString(), "--pairs", "2147483647"},
        {"--kind inputs", "ood", "eval", "--index", idx.toString(), "--in", acts.toString(), "--out", acts.toString(), "--kind", "inputs"}};
    for (String[] c : cases) {
      Cli.Result r = Cli.run(java.util.Arrays.copyOfRange(c, 1, c.length));
      assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(r.err()).as(r.describe()).contains(c[0]).doesNotContain("internal error").doesNotContain("give activations or codes");
      assertThat(r.err().strip()).as(r.describe()).doesNotContain("\n");
    }
    assertThat(!Files.exists(tmp.resolve("m-idx")) || Files2.checksums(tmp.resolve("m-idx")).isEmpty()).isTrue();
    assertThat(tmp.resolve("r1.html")).doesNotExist();
    assertThat(tmp.resolve("r2.html")).doesNotExist();
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }
}
