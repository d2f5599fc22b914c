package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertArrayEquals;

import io.actindex.encode.BinarizeRule;
import io.actindex.encode.EncodeOptions;
import io.actindex.core.BadInputException;
import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Hits;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.store.IndexReader;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.security.MessageDigest;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HexFormat;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** Build, add and query end to end from files, checked against codes computed here from the floats. */
class IndexBuilderTest {
  @TempDir Path tmp;

  static final int N = 300, H1 = 24, H2 = 16, D = H1 + H2;

  /** Sign codes ({@code > 0}) of float rows, computed directly. */
  static CodeBlock signs(float[] acts, int from, int to, CodeLayout layout) {
    boolean[][] rows = new boolean[to - from][D];
    for (int i = from; i < to; i++) for (int j = 0; j < D; j++) rows[i - from][j] = acts[i * D + j] > 0;
    return CodeBlock.fromBits(layout, rows);
  }

  static String metaCsv(int from, int to) {
    StringBuilder sb = new StringBuilder("name,class,part,score\n");
    for (int i = from; i < to; i++) sb.append("ex").append(i).append(',').append(i % 3 == 0 ? "" : "c" + i % 4).append(',')
        .append(i % 2 == 0 ? "train" : "test").append(',').append(i % 10).append('\n');
    return sb.toString();
  }

  @Test
  void activationsAndMetadataToNeighboursThenAdd() {
    long seed = Randoms.seed(11);
    String why = Randoms.describe(seed);
    SyntheticCodes.Sample s = SyntheticCodes.reluLike(N, H1, H2, seed);
    float[] acts = s.activations();
    Path train = TestFiles.npyFloat32(tmp.resolve("train.npy"), 250, D, Arrays.copyOf(acts, 250 * D));
    Path more = TestFiles.npyFloat32(tmp.resolve("more.npy"), 50, D, Arrays.copyOfRange(acts, 250 * D, N * D));
    Path meta = TestFiles.csv(tmp.resolve("train.csv"), metaCsv(0, 250));
    Path meta2 = TestFiles.csv(tmp.resolve("more.csv"), metaCsv(250, N));
    Path dir = tmp.resolve("idx");
    List<long[]> progress = new ArrayList<>();
    IndexBuilder.Result built = IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(train),
        new MetaCsv.Options(meta, "name", "class", "part"), null, null, 64), (d, t) -> progress.add(new long[] {d, t}));
    assertEquals(0, built.firstId());
    assertEquals(250, built.rows());
    assertEquals(D, built.layout().bits());
    assertThat(progress).isNotEmpty();
    // kept magnitudes read the file twice, and the bar counts both reads
    assertArrayEquals(new long[] {500, 500}, progress.get(progress.size() - 1));
    CodeLayout layout = built.layout();
    CodeBlock want = signs(acts, 0, N, layout);

    checkNearest(dir, train, "5:15", want, 250, why);
    IndexBuilder.Result added = IndexBuilder.add(new IndexBuilder.AddParams(dir, Source.activations(more),
        new MetaCsv.Options(meta2, "name", "class", "part"), 0), null);
    assertEquals(250, added.firstId());
    checkNearest(dir, more, "0:50", want, N, why);
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(Map.of("key", "ex260", "label", "c0", "split", "train", "score", "0"), r.meta().document(260));
      assertEquals(Map.of("key", "ex261", "split", "test", "score", "1"), r.meta().document(261)); // 261 % 3 == 0: no label
    }
  }

  /**
   * Activations hooked after a sigmoid are all above 0 (1 / (1 + e^-x), common practice): under
   * the default rule every unit is on in every row and every distance is 0. The build says so per
   * layer; a layer of ReLU-like activations gets no such note.
   */
  @Test
  void aLayerOnInEveryRowIsNoted() {
    long seed = Randoms.seed(31);
    java.util.SplittableRandom rnd = new java.util.SplittableRandom(seed);
    int n = 50, d = 8;
    float[] sigmoid = new float[n * d], relu = new float[n * d];
    for (int i = 0; i < n * d; i++) {
      double z = rnd.nextGaussian();
      sigmoid[i] = (float) (1 / (1 + Math.exp(-z)));
      relu[i] = (float) Math.max(0, z);
    }
    Path sig = TestFiles.npyFloat32(tmp.resolve("sigmoid.npy"), n, d, sigmoid);
    IndexBuilder.Result built = IndexBuilder.build(new IndexBuilder.BuildParams(tmp.resolve("a"), Source.activations(sig), null), null);
    assertThat(built.notes()).as(Randoms.describe(seed)).anySatisfy(m -> assertThat(m).contains("sigmoid.npy").contains("layer act")
        .contains("every unit is on in every row (8 units, 50 rows)").contains("`BinarizeRule.MEDIAN`"));
    Path rel = TestFiles.npyFloat32(tmp.resolve("relu.npy"), n, d, relu);
    IndexBuilder.Result plain = IndexBuilder.build(new IndexBuilder.BuildParams(tmp.resolve("b"), Source.activations(rel), null), null);
    assertThat(plain.notes()).as(Randoms.describe(seed)).noneSatisfy(m -> assertThat(m).contains("every unit"));
    // a threshold above every value turns the same layer off in every row
    IndexBuilder.Result off = IndexBuilder.build(new IndexBuilder.BuildParams(tmp.resolve("c"), Source.activations(sig), null,
        new EncodeOptions(BinarizeRule.THRESHOLD, 1, null), null, 0, 0), null);
    assertThat(off.notes()).anySatisfy(m -> assertThat(m).contains("every unit is off in every row").doesNotContain("`BinarizeRule.MEDIAN`"));
  }

  private void checkNearest(Path dir, Path queryFile, String rows, CodeBlock all, int n, String why) {
    try (IndexReader r = IndexReader.open(dir)) {
      QueryCodes q = QuerySource.load(r, Source.activations(queryFile), RowRange.parse(rows));
      List<Nearest.Result> res = Nearest.run(r, q, new Nearest.Params(7, "split = train", null, 2), null);
      for (int i = 0; i < q.size(); i++) {
        Hits h = BruteForce.knn(all.slice(0, n), q.codes().code(i), 7, id -> id % 2 == 0, null);
        List<Nearest.Neighbor> got = res.get(i).neighbors();
        assertEquals(h.size(), got.size(), why);
        for (int j = 0; j < h.size(); j++) {
          assertEquals(h.ord(j), got.get(j).id(), why);
          assertEquals(h.dist(j), got.get(j).distance(), why);
          assertEquals("ex" + h.ord(j), got.get(j).key(), why);
        }
      }
    }
  }

  @Test
  void queryOfAnotherWidthIsRefusedAndTheIndexIsUnchanged() throws IOException {
    SyntheticCodes.Sample s = SyntheticCodes.reluLike(100, H1, H2, 3);
    Path train = TestFiles.npyFloat32(tmp.resolve("train.npy"), 100, D, s.activations());
    Path dir = tmp.resolve("idx");
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(train), null), null);
    Path narrow = TestFiles.npyFloat32(tmp.resolve("narrow.npy"), 2, D - 1, new float[2 * (D - 1)]);
    String before = digest(dir);
    try (IndexReader r = IndexReader.open(dir)) {
      assertThatThrownBy(() -> QuerySource.load(r, Source.activations(narrow), RowRange.ALL))
          .isInstanceOf(BadInputException.class).hasMessageContaining("narrow.npy")
          .hasMessageContaining((D - 1) + " columns").hasMessageContaining("expects").hasMessageContaining(D + " bits");
    }
    assertThatThrownBy(() -> IndexBuilder.add(new IndexBuilder.AddParams(dir, Source.activations(narrow), null, 0), null))
        .isInstanceOf(BadInputException.class).hasMessageContaining("narrow.npy");
    assertEquals(before, digest(dir));
  }

  @Test
  void metadataRowCountMismatchIsRefusedBeforeWriting() throws IOException {
    SyntheticCodes.Sample s = SyntheticCodes.reluLike(100, H1, H2, 4);
    Path train = TestFiles.npyFloat32(tmp.resolve("train.npy"), 100, D, s.activations());
    Path meta = TestFiles.csv(tmp.resolve("short.csv"), metaCsv(0, 99));
    Path dir = tmp.resolve("idx");
    assertThatThrownBy(() -> IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(train),
        new MetaCsv.Options(meta, "name", null, null)), null))
        .isInstanceOf(BadInputException.class).hasMessageContaining("short.csv").hasMessageContaining("99")
        .hasMessageContaining("100");
    assertThat(dir).doesNotExist();
    // an add with a short CSV leaves the index as it was
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(train), null), null);
    String before = digest(dir);
    assertThatThrownBy(() -> IndexBuilder.add(new IndexBuilder.AddParams(dir, Source.activations(train),
        new MetaCsv.Options(meta, "name", null, null), 0), null)).hasMessageContaining("short.csv");
    assertEquals(before, digest(dir));
    // a build into a folder that is not empty is refused
    assertThatThrownBy(() -> IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(train), null), null))
        .isInstanceOf(BadInputException.class).hasMessageContaining("not empty");
  }

  /**
   * Build from a model and inputs: the three-line network of {@link HandNet} as an MLP (hidden
   * layer fc1 with its 3 ReLU units, output fc2) on a grid of 2-D inputs. The census finds the 7
   * regions of three lines in general position (Zaslavsky 1975); a query given as inputs is run
   * through the model stored in the index.
   */
  @Test
  void modelAndInputsWithTheStoredModelForQueries() {
    HandNet net = HandNet.threeLines();
    int steps = 21;
    float[] grid = new float[steps * steps * 2];
    for (int i = 0, p = 0; i < steps; i++)
      for (int j = 0; j < steps; j++, p++) {
        grid[2 * p] = (float) (-4 + 0.4 * i + 0.013);
        grid[2 * p + 1] = (float) (-4 + 0.4 * j + 0.029);
      }
    Path inputs = TestFiles.npyFloat32(tmp.resolve("grid.npy"), steps * steps, 2, grid);
    Map<String, TestFiles.Tensor> tensors = new TreeMap<>();
    tensors.put("fc1.weight", new TestFiles.Tensor(new int[] {3, 2}, new float[] {1, 0, 0, 1, 1, 1}));
    tensors.put("fc1.bias", new TestFiles.Tensor(new int[] {3}, new float[] {0, 0, -1}));
    tensors.put("fc2.weight", new TestFiles.Tensor(new int[] {1, 3}, new float[] {1, -1, 0.5f}));
    tensors.put("fc2.bias", new TestFiles.Tensor(new int[] {1}, new float[] {0}));
    Path model = TestFiles.safetensors(tmp.resolve("mlp.safetensors"), tensors);
    Path dir = tmp.resolve("idx");
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.inputs(inputs, model), null), null);
    Path query = TestFiles.npyFloat32(tmp.resolve("q.npy"), 1, 2, new float[] {0.25f, 0.25f});
    int inTriangle = 0;
    for (int p = 0; p < steps * steps; p++) if (Arrays.equals(net.code(grid[2 * p], grid[2 * p + 1]), new boolean[] {true, true, false})) inTriangle++;
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(CodeLayout.single("fc1", 3), r.layout());
      Census.Result c = Census.run(r, new Census.Params(null, 7, 1));
      assertEquals(7, c.prefixes().get(0).regions());
      QueryCodes q = QuerySource.load(r, Source.inputs(query, null), RowRange.ALL);
      Region.Result reg = Region.run(r, q, new Region.Params(1, null, null, 3), null).get(0);
      assertThat(inTriangle).isPositive();
      assertEquals(inTriangle, reg.same().count());
      assertEquals(3, reg.nearby().size());
    }
  }

  /** A codes file of two layers, keeping one: queries of the full width are cut down to the kept layer. */
  @Test
  void codesFileKeepingOneLayer() {
    long seed = Randoms.seed(12);
    SyntheticCodes.Sample s = SyntheticCodes.reluLike(200, H1, H2, seed);
    CodeLayout full = CodeLayout.parse("h1:" + H1 + ",h2:" + H2);
    CodeBlock codes = signs(s.activations(), 0, 200, full);
    byte[] bytes = new byte[200 * D];
    for (int i = 0; i < 200; i++) for (int b = 0; b < D; b++) bytes[i * D + b] = (byte) (codes.bit(i, b) ? 1 : 0);
    Path file = TestFiles.npyUint8(tmp.resolve("codes.npy"), 200, D, bytes);
    Path dir = tmp.resolve("idx");
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.codes(file), null,
        new EncodeOptions(BinarizeRule.POSITIVE, 0, List.of("h2")), full, 0), null);
    try (IndexReader r = IndexReader.open(dir)) {
      assertEquals(CodeLayout.single("h2", H2), r.layout());
      QueryCodes q = QuerySource.load(r, Source.codes(file), RowRange.parse("10:13"));
      assertEquals(3, q.size());
      List<Nearest.Result> res = Nearest.run(r, q, new Nearest.Params(5, null, null, 1), null);
      CodeBlock h2 = Layers.project(codes, CodeLayout.single("h2", H2));
      for (int i = 0; i < 3; i++) {
        Hits want = BruteForce.knn(h2, h2.code(10 + i), 5, null, null);
        for (int j = 0; j < want.size(); j++) {
          assertEquals(want.ord(j), res.get(i).neighbors().get(j).id(), Randoms.describe(seed));
          assertEquals(want.dist(j), res.get(i).neighbors().get(j).distance(), Randoms.describe(seed));
        }
      }
    }
  }

  /** Per-neuron medians are computed at build time and reused for queries: every row finds itself at distance 0. */
  @Test
  void medianRuleIsStoredForQueries() {
    SyntheticCodes.Sample s = SyntheticCodes.reluLike(120, H1, H2, 5);
    Path train = TestFiles.npyFloat32(tmp.resolve("train.npy"), 120, D, s.activations());
    Path dir = tmp.resolve("idx");
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.activations(train), null,
        new EncodeOptions(BinarizeRule.MEDIAN, 0, null), null, 50), null);
    try (IndexReader r = IndexReader.open(dir)) {
      QueryCodes q = QuerySource.load(r, Source.activations(train), RowRange.ALL);
      int[] ids = new int[120];
      CodeBlock stored = r.liveCodes(ids);
      assertEquals(Arrays.toString(stored.words()), Arrays.toString(q.codes().words()));
      // and the rule in force is not "> 0": the codes differ from the sign codes
      assertThat(Arrays.toString(stored.words())).isNotEqualTo(Arrays.toString(signs(s.activations(), 0, 120, stored.layout()).words()));
    }
  }

  static String digest(Path dir) throws IOException {
    try (Stream<Path> files = Files.walk(dir)) {
      MessageDigest md = MessageDigest.getInstance("SHA-256");
      for (Path p : files.filter(Files::isRegularFile).filter(p -> !p.getFileName().toString().equals("writer.lock")).sorted().toList()) {
        md.update(dir.relativize(p).toString().getBytes());
        md.update(Files.readAllBytes(p));
      }
      return HexFormat.of().formatHex(md.digest());
    } catch (java.security.NoSuchAlgorithmException e) {
      throw new UncheckedIOException(new IOException(e));
    }
  }

  /**
   * A model build that keeps only layer "2" keeps that layer's magnitudes, and query activations
   * come out in the same columns: both checked against the forward pass computed here (ReLU of
   * W x + b, float weights), within half a quantisation step.
   */
  @Test
  void keptMagnitudesFollowTheKeptLayers() {
    java.util.SplittableRandom rnd = new java.util.SplittableRandom(Randoms.seed(21));
    int in = 5, h1 = 7, h2 = 6, out = 3, n = 80;
    float[] w0 = new float[h1 * in], b0 = new float[h1], w2 = new float[h2 * h1], b2 = new float[h2], w4 = new float[out * h2];
    for (float[] a : List.of(w0, b0, w2, b2, w4)) for (int i = 0; i < a.length; i++) a[i] = (float) rnd.nextGaussian();
    Map<String, TestFiles.Tensor> t = new java.util.LinkedHashMap<>();
    t.put("0.weight", new TestFiles.Tensor(new int[] {h1, in}, w0));
    t.put("0.bias", new TestFiles.Tensor(new int[] {h1}, b0));
    t.put("2.weight", new TestFiles.Tensor(new int[] {h2, h1}, w2));
    t.put("2.bias", new TestFiles.Tensor(new int[] {h2}, b2));
    t.put("4.weight", new TestFiles.Tensor(new int[] {out, h2}, w4));
    t.put("4.bias", new TestFiles.Tensor(new int[] {out}, new float[out]));
    Path model = TestFiles.safetensors(tmp.resolve("m.safetensors"), t);
    float[] x = new float[n * in];
    for (int i = 0; i < x.length; i++) x[i] = (float) rnd.nextGaussian();
    Path inputs = TestFiles.npyFloat32(tmp.resolve("x.npy"), n, in, x);
    double[][] a2 = new double[n][h2];
    for (int r = 0; r < n; r++) {
      double[] a1 = new double[h1];
      for (int u = 0; u < h1; u++) {
        double s = b0[u];
        for (int j = 0; j < in; j++) s += (double) w0[u * in + j] * x[r * in + j];
        a1[u] = Math.max(0, s);
      }
      for (int u = 0; u < h2; u++) {
        double s = b2[u];
        for (int j = 0; j < h1; j++) s += (double) w2[u * h1 + j] * a1[j];
        a2[r][u] = Math.max(0, s);
      }
    }
    Path dir = tmp.resolve("idx");
    IndexBuilder.Result built = IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.inputs(inputs, model), null,
        new EncodeOptions(BinarizeRule.POSITIVE, 0, List.of("2")), null, 0, 8), null);
    assertThat(built.layout().toString()).isEqualTo("2:" + h2);
    assertThat(built.magnitudes().bits()).isEqualTo(8);
    try (IndexReader r = IndexReader.open(dir)) {
      assertThat(r.hasMagnitudes()).isTrue();
      float[] got = new float[h2];
      QuerySource.Queries q = QuerySource.loadWithActivations(r, Source.inputs(inputs, null), RowRange.parse("10:20"), null);
      for (int u = 0; u < h2; u++) {
        double lo = Double.POSITIVE_INFINITY, hi = Double.NEGATIVE_INFINITY;
        for (double[] row : a2) {
          lo = Math.min(lo, row[u]);
          hi = Math.max(hi, row[u]);
        }
        double halfStep = (hi - lo) / 255 / 2 + 1e-4;
        for (int id = 0; id < n; id++) {
          r.magnitudes(id, got, 0);
          assertThat((double) got[u]).as("id " + id + " unit " + u).isCloseTo(a2[id][u], org.assertj.core.api.Assertions.within(halfStep));
        }
        for (int i = 0; i < 10; i++)
          assertThat((double) q.activations()[i * h2 + u]).as("query " + i + " unit " + u)
              .isCloseTo(a2[10 + i][u], org.assertj.core.api.Assertions.within(1e-4));
      }
    }
    // a codes source keeps none, and asking for them is refused
    assertThatThrownBy(() -> new IndexBuilder.BuildParams(tmp.resolve("c"), Source.codes(inputs), null, null, null, 0, 8))
        .isInstanceOf(BadInputException.class).hasMessageContaining("codes carry no magnitudes");
    assertThat(new IndexBuilder.BuildParams(tmp.resolve("c"), Source.codes(inputs), null).magnitudeBits()).isZero();
  }
}
