package io.actindex.query;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.encode.BinarizeRule;
import io.actindex.encode.EncodeOptions;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import io.actindex.index.store.Magnitudes;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.lang.management.ManagementFactory;
import java.lang.management.MemoryMXBean;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.HexFormat;
import java.util.List;
import java.util.Map;
import java.util.Random;
import java.util.TreeMap;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * An add's kept magnitudes quantised in a second read of the file, as a build's are: the segment's
 * magnitudes file the same bytes as the rows' floats quantised in one array give (what add did when
 * it held them), the same quantisation summary, a file changed between the reads refused with the
 * index untouched, and the floats never held (the heap in use after a collection, no timing).
 */
class AddMagnitudesTest {
  @TempDir Path tmp;

  private int copies;

  @Test
  void addOfActivationsSameAsQuantisingTheFloatsInOneArray() {
    for (int t = 0; t < 24; t++) {
      long seed = Randoms.seed(t);
      Random rnd = new Random(seed);
      int n0 = 1 + rnd.nextInt(300), n = 1 + rnd.nextInt(t < 8 ? 20 : 1500), d = 1 + rnd.nextInt(200), chunk = 1 + rnd.nextInt(400);
      int bits = new int[] {2, 4, 8}[rnd.nextInt(3)];
      boolean csv = t % 3 == 0; // a CSV says nothing of its row count beforehand
      String why = Randoms.describe(seed) + " n0=" + n0 + " n=" + n + " d=" + d + " chunk=" + chunk + " bits=" + bits + " csv=" + csv;
      Path dir = tmp.resolve("idx" + t);
      IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(TestFiles.npyFloat32(tmp.resolve("b" + t + ".npy"), n0, d,
          sixtyFourths(rnd, n0, d))), null, null, null, 0, bits, 1), null);
      float[] more = sixtyFourths(rnd, n, d);
      Path file = csv ? csv(tmp.resolve("a" + t + ".csv"), more, n, d) : TestFiles.npyFloat32(tmp.resolve("a" + t + ".npy"), n, d, more);
      addSameAsInOneArray(dir, Source.activations(file), more, n, chunk, why);
    }
  }

  /**
   * Indexes built from a model's inputs: of one hidden layer of two ({@code build --layers 2}),
   * inputs added through the model it stores; of both, activations of both layers side by side with
   * some negative values (taken before ReLU), from a .npy and from a CSV.
   */
  @Test
  void addThroughTheStoredModelAndOfActivationsBeforeRelu() {
    for (int bits : new int[] {8, 4}) {
      Random rnd = new Random(Randoms.seed(bits));
      Path model = model(tmp.resolve("m" + bits + ".safetensors"), rnd);
      Path x = TestFiles.npyFloat32(tmp.resolve("x" + bits + ".npy"), 200, IN, gaussian(rnd, 200 * IN));
      Path some = tmp.resolve("some" + bits), all = tmp.resolve("all" + bits);
      IndexBuilder.build(new IndexBuilder.BuildParams(some, Source.inputs(x, model), null,
          new EncodeOptions(BinarizeRule.POSITIVE, 0, List.of("2")), null, 0, bits, 1), null);
      IndexBuilder.build(new IndexBuilder.BuildParams(all, Source.inputs(x, model), null, null, null, 0, bits, 1), null);

      // inputs through the stored model: the floats the in-memory path kept (every row's, read with the codes) are the reference
      int n = 700;
      Source inputs = Source.inputs(TestFiles.npyFloat32(tmp.resolve("more" + bits + ".npy"), n, IN, gaussian(rnd, n * IN)), null);
      for (Path dir : List.of(some, all)) {
        float[] hidden;
        try (IndexReader r = IndexReader.open(dir)) {
          hidden = QuerySource.loadWithActivations(r, inputs, RowRange.ALL, null).activations();
        }
        assertEquals(n * (dir == some ? H2 : H1 + H2), hidden.length);
        addSameAsInOneArray(dir, inputs, hidden, n, 64, dir + ": inputs, bits " + bits);
      }

      // both layers' activations side by side, some negative: the index keeps them after ReLU
      int m = 450;
      float[] both = sixtyFourths(rnd, m, H1 + H2), relu = both.clone();
      for (int i = 0; i < relu.length; i++) if (relu[i] < 0) relu[i] = 0; // as ReLU does
      for (Path file : List.of(TestFiles.npyFloat32(tmp.resolve("both" + bits + ".npy"), m, H1 + H2, both),
          csv(tmp.resolve("both" + bits + ".csv"), both, m, H1 + H2))) {
        IndexBuilder.Result added = addSameAsInOneArray(all, Source.activations(file), relu, m, 100, file.toString());
        assertTrue(added.notes().stream().anyMatch(s -> s.startsWith(file + ": note:") && s.contains("taken as 0")), added.notes().toString());
      }
    }
  }

  /**
   * An index of two layers of three in another order ({@code build --layers c,a} from a .npz of
   * layers a, b, c): activations of all three added as a .npz (more columns than the index keeps)
   * keep the index's layers' columns in its order; one .npy and a CSV as wide as the index's layers
   * are read as those side by side.
   */
  @Test
  void addOfMoreColumnsThanAnIndexOfSomeLayersKeeps() throws IOException {
    int[] widths = {9, 7, 5};
    int d = 21;
    for (int bits : new int[] {8, 2}) {
      Random rnd = new Random(Randoms.seed(30 + bits));
      Path dir = tmp.resolve("idx" + bits);
      IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(npz(tmp.resolve("b" + bits + ".npz"), sixtyFourths(rnd, 300, d),
          300, widths)), null, new EncodeOptions(BinarizeRule.POSITIVE, 0, List.of("c", "a")), null, 0, bits, 1), null);
      int n = 800;
      float[] values = sixtyFourths(rnd, n, d);
      int[] cols = java.util.stream.IntStream.concat(java.util.stream.IntStream.range(16, 21), java.util.stream.IntStream.range(0, 9)).toArray();
      float[] kept = Layers.pickColumns(values, n, d, cols);
      for (Path file : List.of(npz(tmp.resolve("a" + bits + ".npz"), values, n, widths), TestFiles.npyFloat32(tmp.resolve("a" + bits + ".npy"),
          n, cols.length, kept), csv(tmp.resolve("a" + bits + ".csv"), kept, n, cols.length)))
        addSameAsInOneArray(dir, Source.activations(file), kept, n, 128, file + ", bits " + bits);
    }
  }

  /** {@code n} rows of {@code values} as a .npz of the layers a, b, c of the {@code widths}, side by side in that order. */
  private static Path npz(Path file, float[] values, int n, int[] widths) throws IOException {
    int d = java.util.Arrays.stream(widths).sum();
    try (java.util.zip.ZipOutputStream zip = new java.util.zip.ZipOutputStream(Files.newOutputStream(file))) {
      for (int l = 0, from = 0; l < widths.length; from += widths[l++]) {
        String name = String.valueOf((char) ('a' + l));
        int[] cols = java.util.stream.IntStream.range(from, from + widths[l]).toArray();
        Path one = TestFiles.npyFloat32(file.resolveSibling(name + ".npy"), n, widths[l], Layers.pickColumns(values, n, d, cols));
        zip.putNextEntry(new java.util.zip.ZipEntry(name + ".npy"));
        zip.write(Files.readAllBytes(one));
        zip.closeEntry();
        Files.delete(one);
      }
    }
    return file;
  }

  @Test
  void aFileChangedBetweenTheReadsIsRefusedAndTheIndexUntouched() throws IOException {
    Random rnd = new Random(5);
    int n = 600, d = 30;
    Path dir = tmp.resolve("idx");
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(TestFiles.npyFloat32(tmp.resolve("b.npy"), 100, d,
        sixtyFourths(rnd, 100, d))), null, null, null, 0, 8, 1), null);
    float[] values = sixtyFourths(rnd, n, d);
    float[] same = values.clone();
    for (int i = 0; i < same.length; i++) same[i] *= 2; // the same signs: the same codes
    Path file = TestFiles.npyFloat32(tmp.resolve("a.npy"), n, d, values);
    Map<String, String> before = files(dir, "");
    boolean[] written = {false};
    Progress rewrite = (done, total) -> { // at the end of the first read (half the bar), before the second
      if (!written[0] && total > 0 && done * 2 >= total) {
        TestFiles.npyFloat32(file, n, d, same);
        written[0] = true;
      }
    };
    BadInputException e = assertThrows(BadInputException.class,
        () -> IndexBuilder.add(new IndexBuilder.AddParams(dir, Source.activations(file), null, 64, 1), rewrite));
    assertTrue(written[0], "the bar never passed half way");
    assertTrue(e.getMessage().startsWith(file + ": changed while the add read it (its kept magnitudes take a second read of the file); add again"),
        e.getMessage());
    assertEquals(before, files(dir, ""), "the index changed");
  }

  @Test
  void anAddDoesNotHoldTheFloats() {
    // 20,000 x 256 float32 = 20.5 MB of floats, 5.1 MB of 8-bit magnitudes. Three quarters through the add's progress (the second
    // read) it holds the magnitudes, the codes of each read (0.6 MB each) and a chunk (256 rows: 0.3 MB); the add that held the
    // floats (one array of the final size from the start of its one read) held them then
    int rows = 20_000, cols = 256;
    Random rnd = new Random(12);
    Path dir = tmp.resolve("idx");
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(TestFiles.npyFloat32(tmp.resolve("b.npy"), 500, cols,
        StreamedMagnitudesTest.reluLike(rnd, 500, cols))), null, null, null, 0, 8, 1), null);
    Source src = Source.activations(TestFiles.npyFloat32(tmp.resolve("big.npy"), rows, cols, StreamedMagnitudesTest.reluLike(rnd, rows, cols)));
    MemoryMXBean heap = ManagementFactory.getMemoryMXBean();
    long[] during = {-1};
    Progress probe = (done, total) -> {
      if (during[0] < 0 && total > 0 && done * 4 >= total * 3) during[0] = StreamedMagnitudesTest.live(heap);
    };
    long before = StreamedMagnitudesTest.live(heap);
    IndexBuilder.add(new IndexBuilder.AddParams(dir, src, null, 256, 1), probe);
    assertTrue(during[0] >= 0, "no progress reported past three quarters");
    long floats = 4L * rows * cols, mags = (long) rows * cols, held = during[0] - before;
    assertTrue(held < mags + floats / 2, "keeping " + mags + " bytes of magnitudes, the add held " + held + " bytes more than before it");
  }

  /**
   * Adds {@code src} to the index {@code dir}, and to a copy of it the same rows' codes with
   * {@code want} ({@code n} rows of the index's units, as the index keeps them) quantised in one
   * array by {@link Magnitudes#quantise}: the magnitudes files come out the same bytes, the values
   * read back and the quantisation summary the same.
   */
  private IndexBuilder.Result addSameAsInOneArray(Path dir, Source src, float[] want, int n, int chunk, String why) {
    Path copy = tmp.resolve("copy" + copies++);
    copyTree(dir, copy);
    IndexBuilder.Result got = IndexBuilder.add(new IndexBuilder.AddParams(dir, src, null, chunk, 1), null);
    assertEquals(n, got.rows(), why);
    CodeBlock codes;
    Magnitudes m;
    try (IndexReader r = IndexReader.open(copy)) {
      codes = QuerySource.load(r, src, RowRange.ALL).codes();
      m = Magnitudes.quantise(want, n, r.layout().bits(), r.magnitudeBits());
    }
    assertEquals(IndexBuilder.Quantisation.of(m, want), got.magnitudes(), why);
    try (IndexWriter w = IndexWriter.open(copy)) {
      w.add(codes, m, null);
    }
    Map<String, String> mags = files(dir, ".mags");
    assertTrue(!mags.isEmpty(), why); // one per segment, or one after a merge
    assertEquals(files(copy, ".mags"), mags, why);
    try (IndexReader r = IndexReader.open(dir)) {
      float[] row = new float[m.units()];
      for (int i = 0; i < n; i++) {
        assertTrue(r.magnitudes(got.firstId() + i, row, 0), why);
        assertArrayEquals(m.row(i), row, why + " row " + i);
      }
    }
    return got;
  }

  static final int IN = 5, H1 = 7, H2 = 6, OUT = 3;

  /** A ReLU network IN -> H1 -> H2 -> OUT, its layers named 0, 2, 4 (as PyTorch's nn.Sequential names them). */
  private static Path model(Path file, Random rnd) {
    Map<String, TestFiles.Tensor> t = new java.util.LinkedHashMap<>();
    int[][] shapes = {{H1, IN}, {H2, H1}, {OUT, H2}};
    for (int l = 0; l < 3; l++) {
      t.put(2 * l + ".weight", new TestFiles.Tensor(shapes[l], gaussian(rnd, shapes[l][0] * shapes[l][1])));
      t.put(2 * l + ".bias", new TestFiles.Tensor(new int[] {shapes[l][0]}, gaussian(rnd, shapes[l][0])));
    }
    return TestFiles.safetensors(file, t);
  }

  private static float[] gaussian(Random rnd, int n) {
    float[] v = new float[n];
    for (int i = 0; i < n; i++) v[i] = (float) rnd.nextGaussian();
    return v;
  }

  /** ReLU-like values ({@link StreamedMagnitudesTest#reluLike}) rounded to 64ths: a CSV writes them exactly. */
  private static float[] sixtyFourths(Random rnd, int n, int d) {
    float[] v = StreamedMagnitudesTest.reluLike(rnd, n, d);
    for (int i = 0; i < v.length; i++) v[i] = Math.round(v[i] * 64) / 64f;
    return v;
  }

  private static Path csv(Path file, float[] v, int n, int d) {
    StringBuilder sb = new StringBuilder();
    for (int i = 0; i < n; i++)
      for (int j = 0; j < d; j++) sb.append(v[i * d + j]).append(j == d - 1 ? "\n" : ",");
    return TestFiles.csv(file, sb.toString());
  }

  /** The files of {@code dir} (and below) whose names end with {@code suffix}: relative name to the bytes in hex. */
  private static Map<String, String> files(Path dir, String suffix) {
    Map<String, String> out = new TreeMap<>();
    try (Stream<Path> walk = Files.walk(dir)) {
      for (Path f : walk.filter(Files::isRegularFile).filter(f -> f.getFileName().toString().endsWith(suffix)).toList())
        out.put(dir.relativize(f).toString(), HexFormat.of().formatHex(Files.readAllBytes(f)));
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    return out;
  }

  private static void copyTree(Path from, Path to) {
    try (Stream<Path> walk = Files.walk(from)) {
      for (Path f : walk.toList()) {
        Path dst = to.resolve(from.relativize(f).toString());
        if (Files.isDirectory(f)) Files.createDirectories(dst);
        else Files.copy(f, dst);
      }
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }
}
