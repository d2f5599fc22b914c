package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import io.actindex.core.Randoms;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyHeader;
import io.actindex.encode.io.NpyReader;
import io.actindex.encode.io.NpyWriter;
import io.actindex.encode.io.NpzWriter;
import io.actindex.index.store.IndexReader;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.charset.StandardCharsets;
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
 * {@code export-codes} through the command line: codes built from a {@code .npy} come back as they
 * went in, unpacked and packed, at odd widths, for layers chosen in another order, under a filter and
 * after deletes (checked against the test's own bit-by-bit packing, after NumPy's documentation of
 * {@code numpy.packbits}: default {@code bitorder='big'}, the first bit of eight in the byte's most
 * significant bit, a short last group padded with zero bits); a build from the packed file gives the
 * same codes again; the bytes equal those NumPy writes for the same codes (golden files of
 * tools/golden/make_export_codes.py: NumPy's {@code np.save} and {@code np.packbits}); the kept
 * magnitudes equal the index reader's dequantised values; refused input leaves every file as it was.
 */
class ExportCodesEndToEndTest {
  @TempDir Path tmp;

  static final Path GOLDEN = Path.of("src/test/resources/golden/export_codes");

  /** A {@code .npy} file read back: its type, shape and data bytes. */
  record Npy(NpyDtype dtype, long[] shape, byte[] data) {}

  static Npy read(Path file) throws IOException {
    NpyHeader h;
    try (NpyReader r = NpyReader.open(file)) {
      h = r.header();
    }
    assertThat(h.fortranOrder()).as(file + " in C order").isFalse();
    byte[] all = Files.readAllBytes(file);
    return new Npy(h.dtype(), h.shape(), Arrays.copyOfRange(all, Math.toIntExact(h.dataOffset()), all.length));
  }

  /** The columns {@code cols} of every row, one byte 0/1 each. */
  static byte[] unpacked(boolean[][] rows, int[] cols) {
    byte[] out = new byte[rows.length * cols.length];
    for (int i = 0; i < rows.length; i++)
      for (int c = 0; c < cols.length; c++) out[i * cols.length + c] = (byte) (rows[i][cols[c]] ? 1 : 0);
    return out;
  }

  /** The columns {@code cols} of every row packed as numpy.packbits(axis=1) packs them (see the class comment). */
  static byte[] packed(boolean[][] rows, int[] cols) {
    int width = (cols.length + 7) / 8;
    byte[] out = new byte[rows.length * width];
    for (int i = 0; i < rows.length; i++)
      for (int c = 0; c < cols.length; c++)
        if (rows[i][cols[c]]) out[i * width + c / 8] |= (byte) (1 << (7 - c % 8));
    return out;
  }

  static int[] range(int from, int to) {
    int[] out = new int[to - from];
    for (int i = 0; i < out.length; i++) out[i] = from + i;
    return out;
  }

  static int[] concat(int[] a, int[] b) {
    int[] out = Arrays.copyOf(a, a.length + b.length);
    System.arraycopy(b, 0, out, a.length, b.length);
    return out;
  }

  static boolean[][] randomCodes(SplittableRandom rnd, int n, int bits) {
    boolean[][] codes = new boolean[n][bits];
    for (boolean[] c : codes) for (int b = 0; b < bits; b++) c[b] = rnd.nextInt(3) == 0;
    if (n > 1) Arrays.fill(codes[1], true); // every bit on: the padding bits of a packed last byte stay 0
    return codes;
  }

  static Cli.Result ok(String... args) {
    Cli.Result r = Cli.run(args);
    assertThat(r.code()).as(r.describe()).isZero();
    return r;
  }

  @Test
  void codesComeBackUnpackedAndPackedAtOddWidths() throws IOException {
    int[] widths = {1, 63, 65, 200};
    for (int rep = 0; rep < widths.length; rep++) {
      long seed = Randoms.seed(rep);
      int bits = widths[rep], n = 37;
      String why = Randoms.describe(seed) + " bits=" + bits;
      boolean[][] codes = randomCodes(new SplittableRandom(seed), n, bits);
      Path dir = Files.createDirectories(tmp.resolve("w" + bits));
      Path idx = dir.resolve("idx");
      ok("build", "--out", idx.toString(), "--codes", Files2.bits(dir.resolve("in.npy"), codes).toString(), "--code-layout", "w:" + bits);
      Path plain = dir.resolve("plain.npy"), packed = dir.resolve("packed.npy"), ids = dir.resolve("ids.csv");
      Files.writeString(plain, "an older file, replaced"); // the convention of every output: replaced atomically
      ok("export-codes", "--index", idx.toString(), "--out", plain.toString(), "--ids", ids.toString());
      Npy p = read(plain);
      assertThat(p.dtype()).as(why).isEqualTo(NpyDtype.UINT8);
      assertThat(p.shape()).as(why).containsExactly(n, bits);
      assertThat(p.data()).as(why).isEqualTo(unpacked(codes, range(0, bits)));
      List<String> expectIds = new ArrayList<>(List.of("id,key"));
      for (int i = 0; i < n; i++) expectIds.add(i + ",row-" + i); // no metadata: the keys the store makes up
      assertThat(Files.readAllLines(ids)).as(why).isEqualTo(expectIds);

      JsonNode j = new ObjectMapper().readTree(ok("export-codes", "--index", idx.toString(), "--out", packed.toString(), "--packed",
          "--format", "json").out());
      assertThat(j.get("rows").asInt()).isEqualTo(n);
      assertThat(j.get("bits").asInt()).isEqualTo(bits);
      assertThat(j.get("packed").asBoolean()).isTrue();
      assertThat(j.get("codes").asText()).isEqualTo(packed.toString());
      assertThat(j.get("ids").isNull()).isTrue();
      Npy q = read(packed);
      assertThat(q.shape()).as(why).containsExactly(n, (bits + 7) / 8);
      assertThat(q.data()).as(why).isEqualTo(packed(codes, range(0, bits)));

      // round trip: an index built from the packed file exports the same codes; but build reads a file of one column
      // as 0/1 values, so a packed 1-bit code (one byte, 128 or 0) is refused, as the note on stderr says
      Path again = dir.resolve("again");
      if (bits == 1) {
        assertThat(Cli.run("export-codes", "--index", idx.toString(), "--out", packed.toString(), "--packed").err())
            .contains("note: a packed 1-bit code is one column").contains("without --packed");
        Cli.Result refused = Cli.run("build", "--out", again.toString(), "--codes", packed.toString(), "--code-layout", "w:1");
        assertThat(refused.code()).as(refused.describe()).isEqualTo(2);
        packed = plain;
      }
      ok("build", "--out", again.toString(), "--codes", packed.toString(), "--code-layout", "w:" + bits);
      Path back = dir.resolve("back.npy");
      ok("export-codes", "--index", again.toString(), "--out", back.toString());
      assertThat(Files.readAllBytes(back)).as(why).isEqualTo(Files.readAllBytes(plain));
    }
  }

  @Test
  void layersInAnotherOrderAFilterAndDeletesChooseColumnsAndRows() throws IOException {
    long seed = Randoms.seed(0);
    SplittableRandom rnd = new SplittableRandom(seed);
    String why = Randoms.describe(seed);
    int n = 60; // layout a:3, b:64, c:1
    boolean[][] codes = randomCodes(rnd, n, 68);
    List<String> meta = new ArrayList<>(List.of("key,split"));
    boolean[] test = new boolean[n];
    for (int i = 0; i < n; i++) {
      test[i] = rnd.nextBoolean();
      meta.add(quoted(key(i)) + "," + (test[i] ? "test" : "train"));
    }
    Path idx = tmp.resolve("idx");
    ok("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("in.npy"), codes).toString(), "--code-layout", "a:3,b:64,c:1",
        "--meta", Files2.text(tmp.resolve("meta.csv"), meta).toString());
    boolean[] gone = new boolean[n];
    List<String> goneKeys = new ArrayList<>();
    for (int i = 0; i < n; i++)
      if (rnd.nextInt(4) == 0) {
        gone[i] = true;
        goneKeys.add(key(i));
      }
    ok("delete", "--index", idx.toString(), "--keys", Files2.text(tmp.resolve("gone.txt"), goneKeys).toString());

    List<Integer> kept = new ArrayList<>();
    for (int i = 0; i < n; i++) if (test[i] && !gone[i]) kept.add(i);
    boolean[][] rows = new boolean[kept.size()][];
    List<String> expectIds = new ArrayList<>(List.of("id,key"));
    for (int r = 0; r < rows.length; r++) {
      rows[r] = codes[kept.get(r)];
      String k = key(kept.get(r));
      expectIds.add(kept.get(r) + "," + quoted(k));
    }
    int[] cols = concat(new int[] {67}, range(0, 3)); // c, then a
    Path packed = tmp.resolve("c-a.npy"), ids = tmp.resolve("ids.csv"), plain = tmp.resolve("c-a-plain.npy");
    JsonNode j = new ObjectMapper().readTree(ok("export-codes", "--index", idx.toString(), "--out", packed.toString(), "--packed",
        "--layers", "c,a", "--where", "split = test", "--ids", ids.toString(), "--format", "json").out());
    assertThat(j.get("rows").asInt()).as(why).isEqualTo(kept.size());
    assertThat(j.get("bits").asInt()).isEqualTo(4);
    assertThat(j.get("layers").toString()).isEqualTo("[\"c\",\"a\"]");
    assertThat(j.get("ids").asText()).isEqualTo(ids.toString());
    assertThat(read(packed).data()).as(why).isEqualTo(packed(rows, cols));
    assertThat(Files.readAllLines(ids, StandardCharsets.UTF_8)).as(why).isEqualTo(expectIds);
    ok("export-codes", "--index", idx.toString(), "--out", plain.toString(), "--layers", "c,a", "--where", "split = test");
    assertThat(read(plain).data()).as(why).isEqualTo(unpacked(rows, cols));

    // without a filter: every live example, every layer in the index's order
    List<Integer> live = new ArrayList<>();
    for (int i = 0; i < n; i++) if (!gone[i]) live.add(i);
    boolean[][] liveRows = live.stream().map(i -> codes[i]).toArray(boolean[][]::new);
    Path all = tmp.resolve("all.npy");
    ok("export-codes", "--index", idx.toString(), "--out", all.toString());
    assertThat(read(all).data()).as(why).isEqualTo(unpacked(liveRows, range(0, 68)));

    // round trip: the packed layers as a new index's layout
    Path again = tmp.resolve("again"), back = tmp.resolve("back.npy");
    ok("build", "--out", again.toString(), "--codes", packed.toString(), "--code-layout", "c:1,a:3");
    ok("export-codes", "--index", again.toString(), "--out", back.toString());
    assertThat(Files.readAllBytes(back)).as(why).isEqualTo(Files.readAllBytes(plain));
  }

  /** Some keys hold a comma, so that the ids file must quote them. */
  private static String key(int i) {
    return "ex " + i + (i % 7 == 0 ? ", odd" : "");
  }

  private static String quoted(String cell) {
    return cell.contains(",") ? "\"" + cell + "\"" : cell;
  }

  /** The bytes NumPy writes for the same codes (tools/golden/make_export_codes.py: np.save, np.packbits(axis=1)). */
  @Test
  void theFilesHoldWhatNumPyWritesForTheSameCodes() throws IOException {
    Path idx = tmp.resolve("idx");
    ok("build", "--out", idx.toString(), "--codes", GOLDEN.resolve("codes.npy").toString(), "--code-layout", "a:5,b:8");
    String[][] cases = {{"codes.npy"}, {"packed.npy", "--packed"}, {"unpacked_b_a.npy", "--layers", "b,a"},
        {"packed_b_a.npy", "--packed", "--layers", "b,a"}};
    for (String[] c : cases) {
      Path out = tmp.resolve("out-" + c[0]);
      List<String> args = new ArrayList<>(List.of("export-codes", "--index", idx.toString(), "--out", out.toString()));
      args.addAll(List.of(c).subList(1, c.length));
      ok(args.toArray(String[]::new));
      Npy got = read(out), numpy = read(GOLDEN.resolve(c[0]));
      assertThat(got.dtype()).as(c[0]).isEqualTo(numpy.dtype());
      assertThat(got.shape()).as(c[0]).isEqualTo(numpy.shape());
      assertThat(got.data()).as(c[0]).isEqualTo(numpy.data());
    }
  }

  @Test
  void magnitudesAreTheReadersDequantisedValuesInTheSameRowsAndColumns() throws IOException {
    long seed = Randoms.seed(0);
    SplittableRandom rnd = new SplittableRandom(seed);
    String why = Randoms.describe(seed);
    int n = 40;
    float[][] h1 = new float[n][7], h2 = new float[n][5];
    Path acts = tmp.resolve("acts.npz");
    try (NpzWriter z = NpzWriter.create(acts)) {
      NpyWriter w1 = z.member("h1", NpyDtype.FLOAT32, 7), w2 = z.member("h2", NpyDtype.FLOAT32, 5);
      for (int i = 0; i < n; i++) {
        for (int u = 0; u < 7; u++) h1[i][u] = (float) (rnd.nextDouble() * 4 - 2);
        for (int u = 0; u < 5; u++) h2[i][u] = (float) (rnd.nextDouble() * 4 - 2);
        w1.write(h1[i], 1);
        w2.write(h2[i], 1);
      }
      z.commit();
    }
    List<String> meta = new ArrayList<>(List.of("key,split"));
    for (int i = 0; i < n; i++) meta.add("k" + i + "," + (i % 3 == 0 ? "test" : "train"));
    Path idx = tmp.resolve("idx");
    ok("build", "--out", idx.toString(), "--activations", acts.toString(), "--meta", Files2.text(tmp.resolve("meta.csv"), meta).toString());
    ok("delete", "--index", idx.toString(), "--keys", Files2.text(tmp.resolve("gone.txt"), List.of("k3", "k4", "k30")).toString());
    Path codes = tmp.resolve("codes.npy"), mags = tmp.resolve("mags.npy"), ids = tmp.resolve("ids.csv");
    ok("export-codes", "--index", idx.toString(), "--out", codes.toString(), "--layers", "h2,h1", "--where", "split = test",
        "--ids", ids.toString(), "--magnitudes", mags.toString());
    List<String> lines = Files.readAllLines(ids);
    int[] rows = lines.stream().skip(1).mapToInt(l -> Integer.parseInt(l.substring(0, l.indexOf(',')))).toArray();
    int[] expectRows = java.util.stream.IntStream.range(0, n).filter(i -> i % 3 == 0 && i != 3 && i != 30).toArray();
    assertThat(rows).as(why).containsExactly(expectRows);
    Npy m = read(mags), c = read(codes);
    assertThat(m.dtype()).isEqualTo(NpyDtype.FLOAT32);
    assertThat(m.shape()).containsExactly(rows.length, 12);
    float[] got = new float[rows.length * 12];
    ByteBuffer.wrap(m.data()).order(ByteOrder.LITTLE_ENDIAN).asFloatBuffer().get(got);
    int[] cols = concat(range(7, 12), range(0, 7)); // h2, then h1
    try (IndexReader r = IndexReader.open(idx)) {
      float[] all = new float[12];
      for (int i = 0; i < rows.length; i++) {
        assertThat(r.magnitudes(rows[i], all, 0)).isTrue();
        for (int col = 0; col < 12; col++) {
          assertThat(got[i * 12 + col]).as(why + " row " + i + " column " + col).isEqualTo(all[cols[col]]);
          float act = cols[col] < 7 ? h1[rows[i]][cols[col]] : h2[rows[i]][cols[col] - 7];
          assertThat(c.data()[i * 12 + col]).as(why + " code bit of row " + i + " column " + col).isEqualTo((byte) (act > 0 ? 1 : 0));
        }
      }
    }
  }

  @Test
  void refusedInputExitsTwoAndWritesNothing() throws IOException {
    boolean[][] codes = randomCodes(new SplittableRandom(Randoms.seed(0)), 10, 9);
    List<String> meta = new ArrayList<>(List.of("key,split"));
    for (int i = 0; i < 10; i++) meta.add("k" + i + ",train");
    Path idx = tmp.resolve("idx"), out = Files.createDirectories(tmp.resolve("out"));
    ok("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("in.npy"), codes).toString(), "--code-layout", "a:4,b:5",
        "--meta", Files2.text(tmp.resolve("meta.csv"), meta).toString());
    Path kept = Files.writeString(out.resolve("kept.npy"), "already here");
    String i = idx.toString(), o = out.resolve("x.npy").toString(), k = kept.toString();
    String[][] refused = {
        {"does not exist", "export-codes", "--index", tmp.resolve("nope").toString(), "--out", o},
        {"matches no live example", "export-codes", "--index", i, "--out", k, "--where", "split = test"},
        {"unknown layer 'c'", "export-codes", "--index", i, "--out", k, "--layers", "b,c"},
        {"--where", "export-codes", "--index", i, "--out", k, "--where", "split =="},
        {"--where: the expression is empty", "export-codes", "--index", i, "--out", k, "--where", " "},
        {"its folder does not exist (--out)", "export-codes", "--index", i, "--out", out.resolve("missing/x.npy").toString()},
        {"its folder does not exist (--ids)", "export-codes", "--index", i, "--out", k, "--ids", out.resolve("missing/x.csv").toString()},
        {"is an index folder", "export-codes", "--index", i, "--out", idx.resolve("x.npy").toString()},
        {"--magnitudes and --out", "export-codes", "--index", i, "--out", k, "--magnitudes", k},
        {"keeps no magnitudes to export: it was built from codes", "export-codes", "--index", i, "--out", k, "--magnitudes",
            out.resolve("m.npy").toString(), "--ids", out.resolve("ids.csv").toString()}};
    Map<String, String> indexBefore = Files2.checksums(idx), outBefore = Files2.checksums(out);
    for (String[] c : refused) {
      Cli.Result r = Cli.run(Arrays.copyOfRange(c, 1, c.length));
      assertThat(r.code()).as(r.describe()).isEqualTo(2);
      assertThat(r.err()).as(r.describe()).contains(c[0]);
      assertThat(r.err().strip().lines().count()).as(r.describe()).isEqualTo(1);
      assertThat(Files2.checksums(out)).as(r.describe()).isEqualTo(outBefore);
      assertThat(Files2.checksums(idx)).as(r.describe()).isEqualTo(indexBefore);
    }
    // every example deleted: nothing to export, named so
    ok("delete", "--index", i, "--where", "split = train");
    Cli.Result r = Cli.run("export-codes", "--index", i, "--out", k);
    assertThat(r.code()).as(r.describe()).isEqualTo(2);
    assertThat(r.err()).as(r.describe()).contains(i).contains("holds no live examples");
    assertThat(Files2.checksums(out)).as(r.describe()).isEqualTo(outBefore);
  }
}
