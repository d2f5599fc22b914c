package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.format.JsonWriterTest;
import io.actindex.core.Randoms;
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
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The input readers through the command line: a model's layer order (names, shapes,
 * {@code --layer-order}, refusal of ambiguous orders), {@code --no-output-layer}, CSV
 * {@code --header}, and files that must be refused (exit 2, one line naming the file, index files'
 * SHA-256 unchanged). Expected codes are computed here with plain loops in the model's true order.
 */
class InputReadersEndToEndTest {
  @TempDir Path tmp;

  /** A model of named layers (name, out, in) with random weights, in the given (file) order. */
  private static Path model(Path file, SplittableRandom rnd, Map<String, double[][]> weights, Map<String, double[]> biases, Object... layers) {
    Map<String, SafetensorsWriter.Tensor> t = new LinkedHashMap<>();
    for (int i = 0; i < layers.length; i += 3) {
      String name = (String) layers[i];
      int out = (Integer) layers[i + 1], in = (Integer) layers[i + 2];
      double[][] w = new double[out][in];
      double[] flat = new double[out * in], b = new double[out];
      for (int o = 0; o < out; o++) {
        for (int j = 0; j < in; j++) flat[o * in + j] = w[o][j] = (float) (rnd.nextDouble() * 2 - 1);
        b[o] = (float) (rnd.nextDouble() - 0.5);
      }
      weights.put(name, w);
      biases.put(name, b);
      t.put(name + ".weight", new SafetensorsWriter.Tensor(new long[] {out, in}, flat));
      t.put(name + ".bias", new SafetensorsWriter.Tensor(new long[] {out}, b));
    }
    try {
      SafetensorsWriter.write(file, t, Map.of());
    } catch (java.io.IOException e) {
      throw new java.io.UncheckedIOException(e);
    }
    return file;
  }

  /** Codes of the layers {@code coded} when the layers {@code order} run in that order (ReLU between). */
  private static boolean[][] codes(float[][] x, List<String> order, List<String> coded, Map<String, double[][]> w, Map<String, double[]> b) {
    boolean[][] out = new boolean[x.length][];
    for (int r = 0; r < x.length; r++) {
      List<Boolean> bits = new ArrayList<>();
      double[] a = new double[x[r].length];
      for (int j = 0; j < a.length; j++) a[j] = x[r][j];
      for (String name : order) {
        double[][] wl = w.get(name);
        double[] next = new double[wl.length];
        for (int o = 0; o < wl.length; o++) {
          double s = b.get(name)[o];
          for (int j = 0; j < a.length; j++) s += wl[o][j] * a[j];
          if (coded.contains(name)) bits.add(s > 0);
          next[o] = Math.max(0, s);
        }
        a = next;
      }
      out[r] = new boolean[bits.size()];
      for (int j = 0; j < bits.size(); j++) out[r][j] = bits.get(j);
    }
    return out;
  }

  private static float[][] inputs(int n, int d, SplittableRandom rnd) {
    float[][] x = new float[n][d];
    for (float[] row : x) for (int j = 0; j < d; j++) row[j] = (float) (rnd.nextDouble() * 4 - 2);
    return x;
  }

  private static void refused(Cli.Result r, String file, String... mentions) {
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err().strip()).as(r.describe()).doesNotContain("\n").contains(file).doesNotContain("internal error");
    for (String m : mentions) assertThat(r.err()).as(r.describe()).contains(m);
    assertThat(r.out()).isEmpty();
  }

  @Test
  void squareNamedLayersAreRefusedUntilTheOrderIsGivenThenStoredForQueriesAndAdds() throws Exception {
    long seed = Randoms.seed(801);
    SplittableRandom rnd = new SplittableRandom(seed);
    Map<String, double[][]> w = new LinkedHashMap<>();
    Map<String, double[]> b = new LinkedHashMap<>();
    // input/hidden/output with square hidden layers: alphabetical order (hidden, input, output) would chain too
    Path m = model(tmp.resolve("iho.safetensors"), rnd, w, b, "hidden", 16, 16, "input", 16, 16, "output", 3, 16);
    float[][] x = inputs(60, 16, rnd), q = inputs(5, 16, rnd);
    Path in = Files2.floats(tmp.resolve("x.npy"), x), qf = Files2.floats(tmp.resolve("q.npy"), q);
    Path idx = tmp.resolve("idx");

    refused(Cli.run("build", "--out", idx.toString(), "--model", m.toString(), "--inputs", in.toString()), "iho.safetensors",
        "--layer-order", "input,hidden,output", "hidden,input,output");
    assertThat(Files2.checksums(idx)).isEmpty();

    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--model", m.toString(), "--inputs", in.toString(),
        "--layer-order", "input,hidden,output", "--format", "json");
    assertThat(built.code()).as(built.describe()).isZero();
    JsonNode doc = JsonWriterTest.STRICT.readTree(built.out());
    assertThat(doc.get("layer_order").toString()).isEqualTo("[\"input\",\"hidden\",\"output\"]");
    assertThat(doc.get("code_layers").toString()).isEqualTo("[\"input\",\"hidden\"]");
    assertThat(doc.get("output_layer").asText()).isEqualTo("output");
    assertThat(doc.get("notes").get(0).asText()).contains("as given").contains("output layer output");

    List<String> order = List.of("input", "hidden", "output"), coded = List.of("input", "hidden");
    boolean[][] codes = codes(x, order, coded, w, b), qcodes = codes(q, order, coded, w, b);
    var layers = Reference.layers("input:16", "hidden:16");
    JsonNode near = NearestEndToEndTest.json("nearest", "--index", idx.toString(), "--inputs", qf.toString(), "-k", "4", "--format", "json");
    SourcesEndToEndTest.checkHits(near, SourcesEndToEndTest.plain(codes), qcodes, 4, layers, Randoms.describe(seed) + " stored order");

    // add uses the stored order too: the added rows are found at distance 0 from themselves
    Cli.Result add = Cli.run("add", "--index", idx.toString(), "--inputs", qf.toString());
    assertThat(add.code()).as(add.describe()).isZero();
    List<Reference.Example> all = new ArrayList<>(SourcesEndToEndTest.plain(codes));
    for (int i = 0; i < q.length; i++) all.add(new Reference.Example(x.length + i, qcodes[i], Map.of()));
    near = NearestEndToEndTest.json("nearest", "--index", idx.toString(), "--inputs", qf.toString(), "-k", "3", "--format", "json");
    SourcesEndToEndTest.checkHits(near, all, qcodes, 3, layers, Randoms.describe(seed) + " after add");

    // the table summary goes to stdout, how the model was read to stderr
    Cli.Result table = Cli.run("build", "--out", tmp.resolve("idx2").toString(), "--model", m.toString(), "--inputs", in.toString(),
        "--layer-order", "input,hidden,output");
    assertThat(table.code()).as(table.describe()).isZero();
    assertThat(table.err()).contains("code layers input, hidden").contains("output layer output (not encoded)");
    // with --layers the line names the layers kept as well as every hidden one
    Cli.Result one = Cli.run("build", "--out", tmp.resolve("idx3").toString(), "--model", m.toString(), "--inputs", in.toString(),
        "--layer-order", "input,hidden,output", "--layers", "hidden");
    assertThat(one.code()).as(one.describe()).isZero();
    assertThat(one.err()).contains("hidden layers input, hidden, kept as code layers hidden").doesNotContain("code layers input, hidden");
  }

  @Test
  void nonSquareNamedLayersAreOrderedByShapes() throws Exception {
    SplittableRandom rnd = new SplittableRandom(Randoms.seed(802));
    Map<String, double[][]> w = new LinkedHashMap<>();
    Map<String, double[]> b = new LinkedHashMap<>();
    Path m = model(tmp.resolve("fc.safetensors"), rnd, w, b, "out", 4, 20, "fc2", 20, 20, "fc1", 20, 12);
    Path in = Files2.floats(tmp.resolve("x.npy"), inputs(30, 12, rnd));
    Cli.Result r = Cli.run("build", "--out", tmp.resolve("idx").toString(), "--model", m.toString(), "--inputs", in.toString(), "--format", "json");
    assertThat(r.code()).as(r.describe()).isZero();
    JsonNode doc = JsonWriterTest.STRICT.readTree(r.out());
    assertThat(doc.get("layer_order").toString()).isEqualTo("[\"fc1\",\"fc2\",\"out\"]");
    assertThat(doc.get("notes").get(0).asText()).contains("weight shapes");
  }

  @Test
  void aModelOfHiddenLayersOnlyEncodesEveryLayerWithNoOutputLayer() throws Exception {
    long seed = Randoms.seed(803);
    SplittableRandom rnd = new SplittableRandom(seed);
    Map<String, double[][]> w = new LinkedHashMap<>();
    Map<String, double[]> b = new LinkedHashMap<>();
    Path m = model(tmp.resolve("trunk.safetensors"), rnd, w, b, "0", 6, 8, "2", 5, 6);
    float[][] x = inputs(40, 8, rnd);
    Path in = Files2.floats(tmp.resolve("x.npy"), x);
    Path idx = tmp.resolve("idx");
    Cli.Result r = Cli.run("build", "--out", idx.toString(), "--model", m.toString(), "--inputs", in.toString(), "--no-output-layer", "--format", "json");
    assertThat(r.code()).as(r.describe()).isZero();
    JsonNode doc = JsonWriterTest.STRICT.readTree(r.out());
    assertThat(doc.get("layout").asText()).isEqualTo("0:6,2:5");
    assertThat(doc.get("code_layers").toString()).isEqualTo("[\"0\",\"2\"]");
    assertThat(doc.get("output_layer").isNull()).isTrue();
    boolean[][] codes = codes(x, List.of("0", "2"), List.of("0", "2"), w, b);
    JsonNode near = NearestEndToEndTest.json("nearest", "--index", idx.toString(), "--inputs", in.toString(), "--rows", "0:5", "-k", "3", "--format", "json");
    SourcesEndToEndTest.checkHits(near, SourcesEndToEndTest.plain(codes), java.util.Arrays.copyOf(codes, 5), 3, Reference.layers("0:6", "2:5"),
        Randoms.describe(seed) + " trunk");
    // without the option the last layer is the output layer, as before
    Cli.Result d = Cli.run("build", "--out", tmp.resolve("idx2").toString(), "--model", m.toString(), "--inputs", in.toString(), "--format", "json");
    assertThat(JsonWriterTest.STRICT.readTree(d.out()).get("layout").asText()).isEqualTo("0:6");
    Cli.Result usage = Cli.run("build", "--out", tmp.resolve("idx3").toString(), "--activations", in.toString(), "--no-output-layer");
    assertThat(usage.code()).isEqualTo(ExitCodes.USAGE);
    assertThat(usage.err()).contains("go with --model");
  }

  private Path csv(String name, String text) throws Exception {
    return Files.writeString(tmp.resolve(name), text, StandardCharsets.UTF_8);
  }

  @Test
  void csvHeaderOfColumnNumbersIsAHeaderAndAMixedLineIsRefused() throws Exception {
    StringBuilder sb = new StringBuilder("0,1,2,3\n");
    for (int i = 0; i < 10; i++) sb.append(i % 3 - 1).append(",1,").append(i % 2).append(",-2\n");
    Path f = csv("acts.csv", sb.toString());
    Cli.Result r = Cli.run("build", "--out", tmp.resolve("a").toString(), "--activations", f.toString(), "--format", "json");
    assertThat(r.code()).as(r.describe()).isZero();
    JsonNode doc = JsonWriterTest.STRICT.readTree(r.out());
    assertThat(doc.get("rows").asInt()).as("ids are not shifted by a header read as data").isEqualTo(10);
    assertThat(doc.get("notes").get(0).asText()).contains("taken as the header");
    Cli.Result no = Cli.run("build", "--out", tmp.resolve("b").toString(), "--activations", f.toString(), "--header", "no", "--format", "json");
    assertThat(JsonWriterTest.STRICT.readTree(no.out()).get("rows").asInt()).isEqualTo(11);

    Path idx = tmp.resolve("a");
    Map<String, String> before = Files2.checksums(idx);
    Path mixed = csv("mixed.csv", "1,2,x3,4\n1,2,3,4\n");
    refused(Cli.run("add", "--index", idx.toString(), "--activations", mixed.toString()), "mixed.csv", "column 2", "'x3'", "--header");
    refused(Cli.run("nearest", "--index", idx.toString(), "--activations", mixed.toString()), "mixed.csv", "--header");
    refused(Cli.run("build", "--out", tmp.resolve("c").toString(), "--activations", f.toString(), "--header", "maybe"), "--header", "'maybe'");
    assertThat(Files2.checksums(idx)).isEqualTo(before);
    // a query file read with a header says so on stderr
    Cli.Result q = Cli.run("nearest", "--index", idx.toString(), "--activations", f.toString(), "--rows", "0", "--format", "json");
    assertThat(q.code()).as(q.describe()).isZero();
    assertThat(q.err()).contains("taken as the header");
  }

  /**
   * One column of decimals written with a decimal comma ({@code 0,342}) is refused under
   * {@code --header auto}; with {@code --rows} reading stopped before the end of a file longer than
   * one chunk, where alone the rule was checked, and the rows were read as two columns (exit 0).
   */
  @Test
  void decimalCommaRowsAreRefusedWhenRowsStopReadingEarly() throws Exception {
    SplittableRandom rnd = new SplittableRandom(Randoms.seed(0xdc));
    StringBuilder train = new StringBuilder("a,b\n");
    for (int i = 0; i < 20; i++) train.append(rnd.nextInt(-3, 4)).append(',').append(rnd.nextInt(-3, 4)).append('\n');
    Path idx = tmp.resolve("idx");
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--activations", csv("train.csv", train.toString()).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    StringBuilder sb = new StringBuilder();
    for (int i = 0; i < 9_000; i++) sb.append(rnd.nextInt(0, 2)).append(',').append(rnd.nextInt(0, 1000)).append('\n'); // past one chunk
    Path f = csv("decimal-comma.csv", sb.toString());
    for (String rows : new String[] {"0:3", "7", "5000:5002"})
      for (String[] cmd : new String[][] {{"nearest", "-k", "1"}, {"region", "--radius", "1"}})
        refused(Cli.run(cmd[0], cmd[1], cmd[2], "--index", idx.toString(), "--activations", f.toString(), "--rows", rows), "decimal-comma.csv",
            "every row read", "decimal comma", "--header no");
    Cli.Result no = Cli.run("nearest", "--index", idx.toString(), "--activations", f.toString(), "--rows", "0:3", "--header", "no", "--format", "json");
    assertThat(no.code()).as(no.describe()).isZero();
    assertThat(JsonWriterTest.STRICT.readTree(no.out()).get("results").size()).isEqualTo(3);
  }

  @Test
  void badlyEncodedAndHostileFilesAreRefusedLeavingTheIndexUnchanged() throws Exception {
    Path idx = tmp.resolve("idx");
    Path good = csv("good.csv", "a,b,c\n1,0,2\n0,3,0\n");
    assertThat(Cli.run("build", "--out", idx.toString(), "--activations", good.toString()).code()).isZero();
    Map<String, String> before = Files2.checksums(idx);
    Path u16 = Files.write(tmp.resolve("u16.csv"), "a,b,c\n1,0,2\n".getBytes(StandardCharsets.UTF_16LE));
    Path latin1 = Files.write(tmp.resolve("latin1.csv"), "a,b,c\n1,0,2\ncaf\u00e9,1,1\n".getBytes(StandardCharsets.ISO_8859_1));
    byte[] zero = ByteBuffer.allocate(10 + 12).order(ByteOrder.LITTLE_ENDIAN).put(Files2.NPY_MAGIC).put((byte) 1).put((byte) 0).putShort((short) 0).array();
    Path hlen0 = Files2.write(tmp.resolve("hlen0.npy"), zero);
    Path nested = Files2.rawNpy(tmp.resolve("nested.npy"), Files2.NPY_MAGIC,
        "{'descr': '<f4', 'fortran_order': False, 'shape': " + "(".repeat(30_000) + ")".repeat(30_000) + "}", new byte[0]);
    for (Object[] c : new Object[][] {{u16, "UTF-16"}, {latin1, "byte 15 (line 3)"}, {hlen0, "header length is 0"}, {nested, "nesting"}}) {
      Path f = (Path) c[0];
      refused(Cli.run("add", "--index", idx.toString(), "--activations", f.toString()), f.getFileName().toString(), (String) c[1]);
      refused(Cli.run("nearest", "--index", idx.toString(), "--activations", f.toString()), f.getFileName().toString(), (String) c[1]);
      assertThat(Files2.checksums(idx)).as(f.toString()).isEqualTo(before);
    }
  }

  @Test
  void modelMessagesNameTheIndexNotATemporaryCopy() throws Exception {
    SplittableRandom rnd = new SplittableRandom(Randoms.seed(804));
    Path m = model(tmp.resolve("m.safetensors"), rnd, new LinkedHashMap<>(), new LinkedHashMap<>(), "0", 5, 3, "2", 2, 5);
    Path idx = tmp.resolve("idx");
    assertThat(Cli.run("build", "--out", idx.toString(), "--model", m.toString(), "--inputs", Files2.floats(tmp.resolve("x.npy"), inputs(9, 3, rnd)).toString())
        .code()).isZero();
    Path wide = Files2.floats(tmp.resolve("wide.npy"), inputs(2, 4, rnd));
    Cli.Result r = Cli.run("nearest", "--index", idx.toString(), "--inputs", wide.toString());
    refused(r, "wide.npy", idx.resolve("model.safetensors").toString(), "the model stored in the index");
    assertThat(r.err()).doesNotContain("actindex-model");
    // a data-frame export with its row index as an extra column: the refusal carries the hint
    Path df = csv("df.csv", ",0,1,2\n0,0.5,1,2\n1,0.25,-1,0\n2,1,1,1\n");
    refused(Cli.run("build", "--out", tmp.resolve("idx2").toString(), "--model", m.toString(), "--inputs", df.toString()), "df.csv",
        "rows have 4 values", "row index");
  }

  @Test
  void modelsWithABadHeaderAndArchivesWithTwinMembersAreRefused() throws Exception {
    byte[] json = "{\"fc\u00e9.weight\":{\"dtype\":\"F32\",\"shape\":[1,1],\"data_offsets\":[0,4]}}".getBytes(StandardCharsets.ISO_8859_1);
    ByteBuffer st = ByteBuffer.allocate(8 + json.length + 4).order(ByteOrder.LITTLE_ENDIAN).putLong(json.length).put(json);
    Path latin1 = Files2.write(tmp.resolve("latin1.safetensors"), st.array());
    Path x = Files2.floats(tmp.resolve("x.npy"), inputs(3, 1, new SplittableRandom(3)));
    Path out = tmp.resolve("never");
    refused(Cli.run("build", "--out", out.toString(), "--model", latin1.toString(), "--inputs", x.toString()), "latin1.safetensors", "not valid UTF-8");
    assertThat(Files2.checksums(out)).isEmpty();

    Path idx = tmp.resolve("idx");
    Path acts = Files2.floats(tmp.resolve("acts.npy"), inputs(10, 3, new SplittableRandom(4)));
    assertThat(Cli.run("build", "--out", idx.toString(), "--activations", acts.toString()).code()).isZero();
    Map<String, String> before = Files2.checksums(idx);
    byte[] zip = storedZip(Files.readAllBytes(acts), "act.npy", "bct.npy"); // renamed to act.npy below: the JDK's writer refuses twins
    for (int i = 0; i + 7 <= zip.length; i++) if (new String(zip, i, 7, StandardCharsets.ISO_8859_1).equals("bct.npy")) zip[i] = 'a';
    Path twins = Files2.write(tmp.resolve("twins.npz"), zip);
    refused(Cli.run("add", "--index", idx.toString(), "--activations", twins.toString()), "twins.npz", "two members named 'act.npy'");
    refused(Cli.run("nearest", "--index", idx.toString(), "--activations", twins.toString()), "twins.npz");
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  @Test
  void aDamagedNpzIsRefusedByItsCrc() throws Exception {
    Path idx = tmp.resolve("idx");
    Path acts = Files2.floats(tmp.resolve("acts.npy"), inputs(20, 3, new SplittableRandom(5)));
    assertThat(Cli.run("build", "--out", idx.toString(), "--activations", acts.toString()).code()).isZero();
    Map<String, String> before = Files2.checksums(idx);
    byte[] member = Files.readAllBytes(acts);
    byte[] zip = storedZip(member, "act.npy");
    Path good = Files2.write(tmp.resolve("good.npz"), zip);
    Cli.Result ok = Cli.run("nearest", "--index", idx.toString(), "--activations", good.toString(), "--rows", "0", "--format", "json");
    assertThat(ok.code()).as(ok.describe()).isZero();
    zip[30 + "act.npy".length() + member.length - 2] ^= 0x40; // a data byte of the last value (local header: 30 bytes + name)
    Path bad = Files2.write(tmp.resolve("bad.npz"), zip);
    refused(Cli.run("add", "--index", idx.toString(), "--activations", bad.toString()), "bad.npz[act]", "CRC-32");
    // rows that stop before the damage: the rest of the member is read for its CRC all the same
    // (was: exit 0, the member's CRC never checked because the reader stopped early)
    refused(Cli.run("nearest", "--index", idx.toString(), "--activations", bad.toString(), "--rows", "0"), "bad.npz[act]", "CRC-32",
        "whole member");
    refused(Cli.run("ood", "calibrate", "--index", idx.toString(), "--activations", bad.toString(), "--rows", "0:5"), "bad.npz[act]", "CRC-32");
    assertThat(Files2.checksums(idx)).isEqualTo(before);
    // a member cut short inside its stored data is refused too (the zip names a size it does not hold)
    byte[] cut = java.util.Arrays.copyOf(zip, 30 + "act.npy".length() + member.length / 2);
    refused(Cli.run("nearest", "--index", idx.toString(), "--activations", Files2.write(tmp.resolve("cut.npz"), cut).toString(), "--rows", "0"),
        "cut.npz");
  }

  /** A zip archive (as np.savez writes: members stored, not compressed) with {@code member} under each name. */
  private static byte[] storedZip(byte[] member, String... names) throws java.io.IOException {
    java.io.ByteArrayOutputStream bytes = new java.io.ByteArrayOutputStream();
    try (var z = new java.util.zip.ZipOutputStream(bytes)) {
      for (String name : names) {
        var e = new java.util.zip.ZipEntry(name);
        e.setMethod(java.util.zip.ZipEntry.STORED);
        e.setSize(member.length);
        var crc = new java.util.zip.CRC32();
        crc.update(member);
        e.setCrc(crc.getValue());
        z.putNextEntry(e);
        z.write(member);
        z.closeEntry();
      }
    }
    return bytes.toByteArray();
  }
}
