package io.actindex.encode;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.encode.io.ArrayMatrixReader;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import io.actindex.encode.mlp.Mlp;
import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.ejml.data.DMatrixRMaj;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

public class EncodersTest {
  @TempDir Path tmp;

  public static CodeBlock all(CodeStream s, int chunk) throws IOException {
    CodeBlock out = null, b;
    while ((b = s.next(chunk)) != null) out = out == null ? b : out.concat(b);
    return out;
  }

  @Test
  void positiveRuleOnNumpyFileMatchesNumpysSigns() throws IOException {
    // Golden values from NumPy; bit = value > 0 (DESIGN "Inputs"), checked value by value.
    for (String name : List.of("f4_C_le", "f8_F_be", "f2_C_be", "i2_F_le", "i8_C_le", "b1_C_le")) {
      Golden.Expected want = Golden.expected(name);
      try (CodeStream s = Encoders.activations(Golden.path(name + ".npy"), EncodeOptions.positive())) {
        assertThat(s.layout()).isEqualTo(CodeLayout.single("act", want.cols()));
        CodeBlock codes = all(s, 2);
        assertThat(codes.size()).isEqualTo(want.rows());
        for (int r = 0; r < want.rows(); r++)
          for (int c = 0; c < want.cols(); c++) assertThat(codes.bit(r, c)).as(name + " " + r + "," + c).isEqualTo(want.values()[r * want.cols() + c] > 0);
        assertThat(s.stats().rows()).isEqualTo(want.rows());
      }
    }
  }

  @Test
  void thresholdRuleIsExactOnFloatsForAnyDoubleThreshold() throws IOException {
    // v > t for float v and a double t that no float equals: the float fast path must agree with double compares.
    Golden.Expected want = Golden.expected("f4_C_le");
    for (double t : new double[] {0.1, -3.3, 2.25, 1e-300, -1e-300, 1e40, -1e40}) {
      try (CodeStream s = Encoders.activations(Golden.path("f4_C_le.npy"), new EncodeOptions(BinarizeRule.THRESHOLD, t, List.of("layer")))) {
        CodeBlock codes = all(s, 3);
        assertThat(codes.layout().segments().getFirst().name()).isEqualTo("layer");
        for (int i = 0; i < want.values().length; i++)
          assertThat(codes.bit(i / want.cols(), i % want.cols())).as("t=" + t + " i=" + i).isEqualTo(want.values()[i] > t);
      }
    }
  }

  @Test
  void medianRuleUsesNumpysMedians() throws IOException {
    // np.median(axis=0) of the golden matrices, odd and even row counts (make_npy.py).
    for (int rows : new int[] {11, 12}) {
      double[] npMedian = Golden.column("median_" + rows + ".txt");
      Path f = Golden.path("median_" + rows + ".npy");
      try (CodeStream s = Encoders.activations(f, new EncodeOptions(BinarizeRule.MEDIAN, 0, null))) {
        double[] med = s.options().medians().get("act");
        assertThat(med).containsExactly(npMedian);
        CodeBlock codes = all(s, 4);
        double[] v = io.actindex.encode.io.NpyReaderTestAccess.readAll(f);
        for (int i = 0; i < v.length; i++) assertThat(codes.bit(i / 6, i % 6)).isEqualTo(v[i] > npMedian[i % 6]);
        // column 5 is constant 0: never above its median, so a dead neuron
        assertThat(s.stats().dead()).contains(5);
        // the stored properties reproduce the same codes for queries
        EncodeOptions back = Encoders.fromProperties(Encoders.describe(s.options()));
        assertThat(back.medians().get("act")).containsExactly(npMedian);
        try (CodeStream q = Encoders.activations(f, back)) {
          assertThat(all(q, 100).words()).containsExactly(codes.words());
        }
      }
    }
  }

  @Test
  void npzLayersInGivenOrderBecomeSegments() throws IOException {
    for (String z : List.of("layers_stored.npz", "layers_deflated.npz")) {
      Golden.Expected first = Golden.expected("layers_first"), second = Golden.expected("layers_second");
      try (CodeStream s = Encoders.activations(Golden.path(z), new EncodeOptions(BinarizeRule.POSITIVE, 0, List.of("second", "first")))) {
        assertThat(s.layout().toString()).isEqualTo("second:3,first:5");
        CodeBlock c = all(s, 4);
        for (int r = 0; r < 6; r++) {
          for (int j = 0; j < 3; j++) assertThat(c.bit(r, j)).isEqualTo(second.values()[r * 3 + j] > 0);
          for (int j = 0; j < 5; j++) assertThat(c.bit(r, 3 + j)).isEqualTo(first.values()[r * 5 + j] > 0);
        }
      }
      try (CodeStream s = Encoders.activations(Golden.path(z), EncodeOptions.positive())) {
        assertThat(s.layout().toString()).isEqualTo("first:5,second:3");
      }
    }
  }

  @Test
  void npzLayersWithDifferentRowCountsAreRefused() throws IOException {
    Path f = tmp.resolve("mixed.npz");
    try (var zip = new java.util.zip.ZipOutputStream(Files.newOutputStream(f))) {
      for (var e : Map.of("a", Golden.path("f4_C_le.npy"), "b", Golden.path("version_1_0.npy")).entrySet()) {
        zip.putNextEntry(new java.util.zip.ZipEntry(e.getKey() + ".npy"));
        zip.write(Files.readAllBytes(e.getValue()));
        zip.closeEntry();
      }
    }
    assertThatThrownBy(() -> Encoders.activations(f, EncodeOptions.positive()).close()).isInstanceOf(BadInputException.class)
        .hasMessageContaining("mixed.npz").hasMessageContaining("rows");
  }

  /**
   * Layers saved as units by examples (a (16, 50) and an (8, 50) array for 50 examples) differ in
   * rows but agree in columns: the refusal suggests the transposition.
   */
  @Test
  void npzLayersSavedTransposedGetAHint() throws IOException {
    Path f = tmp.resolve("transposed.npz");
    try (io.actindex.encode.io.NpzWriter z = io.actindex.encode.io.NpzWriter.create(f)) {
      z.member("a", io.actindex.encode.io.NpyDtype.FLOAT32, 50).write(new double[16 * 50], 16);
      z.member("b", io.actindex.encode.io.NpyDtype.FLOAT32, 50).write(new double[8 * 50], 8);
      z.commit();
    }
    assertThatThrownBy(() -> Encoders.activations(f, EncodeOptions.positive()).close()).isInstanceOf(BadInputException.class)
        .hasMessageContaining("transposed.npz").hasMessageContaining("layer 'b' has 8 rows but layer 'a' has 16")
        .hasMessageContaining("both have 50 columns").hasMessageContaining("a.T");
  }

  @Test
  void randomActivationsAgainstBitByBitReference() throws IOException {
    // Widths around word boundaries, float32 and float64, chunk sizes that split rows unevenly.
    long seed = Randoms.seed(0);
    SplittableRandom rnd = new SplittableRandom(seed);
    for (int trial = 0; trial < 20; trial++) {
      int n = 1 + rnd.nextInt(300), d = 1 + rnd.nextInt(200);
      NpyDtype t = rnd.nextBoolean() ? NpyDtype.FLOAT32 : NpyDtype.FLOAT64;
      double[] v = new double[n * d];
      for (int i = 0; i < v.length; i++) v[i] = rnd.nextInt(4) == 0 ? 0 : (float) (rnd.nextGaussian() - 0.3);
      Path f = tmp.resolve("r" + trial + ".npy");
      try (NpyWriter w = NpyWriter.create(f, t, d)) {
        w.write(v, n);
        w.commit();
      }
      try (CodeStream s = Encoders.activations(f, EncodeOptions.positive())) {
        CodeBlock c = all(s, 1 + rnd.nextInt(50));
        long[] firing = s.stats().firingCounts();
        for (int i = 0; i < n; i++)
          for (int j = 0; j < d; j++)
            if (c.bit(i, j) != v[i * d + j] > 0) throw new AssertionError(Randoms.describe(seed) + " trial " + trial + ": bit " + i + "," + j);
        for (int j = 0; j < d; j++) {
          int count = 0;
          for (int i = 0; i < n; i++) if (v[i * d + j] > 0) count++;
          assertThat(firing[j]).as(Randoms.describe(seed) + " firing " + j).isEqualTo(count);
        }
      }
    }
  }

  @Test
  void csvWithAndWithoutHeader() throws IOException {
    Path a = tmp.resolve("a.csv"), b = tmp.resolve("b.csv");
    Files.writeString(a, "n0,n1,n2\n0.5,-1,0\n\n2,3,-4e-3\n");
    Files.writeString(b, "0.5,-1,0\n2,3,-4e-3\n");
    for (Path p : List.of(a, b)) {
      try (CodeStream s = Encoders.activations(p, EncodeOptions.positive())) {
        assertThat(s.rows()).isEqualTo(-1);
        CodeBlock c = all(s, 1);
        assertThat(c.size()).isEqualTo(2);
        assertThat(c.code(0)[0]).isEqualTo(0b001L);
        assertThat(c.code(1)[0]).isEqualTo(0b011L);
        assertThat(s.stats().dead()).containsExactly(2);
        assertThat(s.stats().alwaysOn()).containsExactly(0);
      }
    }
  }

  @Test
  void csvBadCellsNameLineRowAndColumn() throws IOException {
    Map<String, String> cases = Map.of(
        "1,2,4\n4,x,6\n", "line 2 (row 1), column 1",
        "1,2,4\n4,5\n", "line 2 (row 1)",
        "1,2,4\n4,5,6,7\n", "column 3",
        "1,2,4\n4,,6\n", "empty field",
        "a,b\n1,NaN\n", "line 2 (row 0), column 1",
        "1,2\n3,-Infinity\n", "only finite",
        "inf_count,b\n1,0x10\n", "'0x10' is not a number",
        "1,2\n3,4d\n", "'4d' is not a number");
    int k = 0;
    for (var e : cases.entrySet()) {
      Path f = tmp.resolve("bad" + (k++) + ".csv");
      Files.writeString(f, e.getKey());
      assertThatThrownBy(() -> {
        try (CodeStream s = Encoders.activations(f, EncodeOptions.positive())) {
          all(s, 10);
        }
      }).as(e.getKey()).isInstanceOf(BadInputException.class).hasMessageContaining(f.toString()).hasMessageContaining(e.getValue());
    }
  }

  @Test
  void nanInActivationsIsRefusedNamingRowAndColumn() {
    assertThatThrownBy(() -> {
      try (CodeStream s = Encoders.activations(Golden.path("nan_f4.npy"), EncodeOptions.positive())) {
        all(s, 10);
      }
    }).isInstanceOf(BadInputException.class).hasMessageContaining("nan_f4.npy").hasMessageContaining("row 1, column 1");
  }

  @Test
  void keptActivationsBeyondFloat32AreRefusedNamingRowAndColumn() throws IOException {
    // float64 activations past Float.MAX_VALUE make valid codes but cannot be kept as float32
    // magnitudes: they used to reach the quantiser as infinity and end in an internal error.
    double[][] rows = {{1, -1}, {2, 3}, {0.5, 0.25}, {1, -1e39}};
    try (CodeStream s = Encoders.activations(() -> ArrayMatrixReader.of("big.npy", rows), "act", EncodeOptions.positive())) {
      assertThat(s.next(3).size()).isEqualTo(3);
      assertThat(s.lastActivations()).containsExactly(1, -1, 2, 3, 0.5f, 0.25f);
      assertThat(s.next(3).code(0)[0]).isEqualTo(0b01L);
      assertThatThrownBy(s::lastActivations).isInstanceOf(BadInputException.class)
          .hasMessageContaining("big.npy: row 3, column 1").hasMessageContaining("float32");
    }
  }

  /**
   * The same through a model: the row is the inputs file's, the model and layer say where the value
   * came from. The message named the model file for the row ("model.safetensors: layer '0', row 1,
   * column 0"), though the model has no rows (a new user's run: digits scaled by 1e160).
   */
  @Test
  void keptActivationsBeyondFloat32ThroughAModelNameTheInputsRow() throws IOException {
    DMatrixRMaj w = new DMatrixRMaj(new double[][] {{1, 0}, {0, 1}});
    Mlp mlp = new Mlp(List.of(new Mlp.Layer("h", w, new double[2]), new Mlp.Layer("out", w.copy(), new double[2])));
    double[][] rows = {{1, 2}, {3, 1e160}};
    try (CodeStream s = Encoders.model(mlp, "m.safetensors", () -> ArrayMatrixReader.of("in.npy", rows), EncodeOptions.positive())) {
      assertThat(s.next(5).size()).isEqualTo(2);
      assertThatThrownBy(s::lastActivations).isInstanceOf(BadInputException.class)
          .hasMessageStartingWith("in.npy: row 1 (0-based) through the model m.safetensors, layer 'h', unit 1: value 1.0E160 does not fit the float32")
          .hasMessageContaining("scale the inputs");
    }
  }

  @Test
  void aFolderGivenAsAFileIsNamedAsAFolder() throws IOException {
    Path folder = Files.createDirectory(tmp.resolve("acts.npy"));
    assertThatThrownBy(() -> Encoders.activations(folder, EncodeOptions.positive())).isInstanceOf(BadInputException.class)
        .hasMessage(folder + ": is a folder, not a file");
  }

  @Test
  void unknownFileTypeAndMissingFile() {
    assertThatThrownBy(() -> Encoders.activations(tmp.resolve("nope.npy"), EncodeOptions.positive())).isInstanceOf(BadInputException.class)
        .hasMessageContaining("no such file");
    assertThatThrownBy(() -> {
      Path p = Files.writeString(tmp.resolve("x.parquet"), "");
      Encoders.activations(p, EncodeOptions.positive());
    }).isInstanceOf(BadInputException.class).hasMessageContaining("x.parquet");
  }

  @Test
  void describeRoundTrips() {
    for (EncodeOptions o : List.of(EncodeOptions.positive(), new EncodeOptions(BinarizeRule.THRESHOLD, 0.1, List.of("a", "b")),
        new EncodeOptions(BinarizeRule.MEDIAN, 0, null, Map.of("x", new double[] {0.1, -2.5e-17, 3})),
        EncodeOptions.positive().withModel(List.of("in put", "hid,den", "out\"put"), false),
        EncodeOptions.positive().withModel(List.of("fc1", "out"), true))) {
      EncodeOptions back = Encoders.fromProperties(Encoders.describe(o));
      assertThat(back.layerOrder()).isEqualTo(o.layerOrder());
      assertThat(back.outputLayer()).isEqualTo(o.outputLayer());
      assertThat(back.rule()).isEqualTo(o.rule());
      assertThat(back.threshold()).isEqualTo(o.rule() == BinarizeRule.THRESHOLD ? o.threshold() : 0);
      assertThat(back.layers()).isEqualTo(o.layers());
      if (o.medians() != null) assertThat(back.medians().get("x")).containsExactly(o.medians().get("x"));
    }
    assertThatThrownBy(() -> Encoders.fromProperties(Map.of(Encoders.RULE, "sign"))).isInstanceOf(BadInputException.class).hasMessageContaining("encode.rule");
    assertThatThrownBy(() -> Encoders.fromProperties(Map.of(Encoders.LAYER_ORDER, "[1,2]"))).isInstanceOf(BadInputException.class)
        .hasMessageContaining(Encoders.LAYER_ORDER);
    assertThatThrownBy(() -> Encoders.fromProperties(Map.of(Encoders.OUTPUT_LAYER, "maybe"))).isInstanceOf(BadInputException.class)
        .hasMessageContaining(Encoders.OUTPUT_LAYER);
    assertThatThrownBy(() -> Encoders.fromProperties(Map.of(Encoders.RULE, "threshold", Encoders.THRESHOLD, "abc")))
        .isInstanceOf(BadInputException.class).hasMessageContaining("encode.threshold");
  }

  @Test
  void mediansOfTheWrongWidthAreRefused() {
    EncodeOptions o = new EncodeOptions(BinarizeRule.MEDIAN, 0, null, Map.of("act", new double[] {1, 2}));
    assertThatThrownBy(() -> Encoders.activations(Golden.path("f4_C_le.npy"), o)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("7 neurons").hasMessageContaining("2 values");
  }

  @Test
  void rowsInMemoryEncodeLikeAFile() throws IOException {
    try (CodeStream s = Encoders.activations(() -> ArrayMatrixReader.of("query", new double[][] {{1, -1, 0.5}}), "act", EncodeOptions.positive())) {
      assertThat(s.next(10).code(0)[0]).isEqualTo(0b101L);
      assertThat(s.next(10)).isNull();
    }
  }
}
