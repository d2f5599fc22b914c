package io.actindex.encode.io;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.encode.Golden;
import io.actindex.core.BadInputException;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.MethodSource;

/**
 * The reader against files written by NumPy itself (np.save, numpy.lib.format, NumPy 2.x; see
 * tools/golden/make_npy.py): every dtype, C and Fortran order, both byte orders, format versions
 * 1.0/2.0/3.0. The expected values are NumPy's own float64 conversions; the reader must return
 * exactly those.
 */
class NpyReaderTest {
  @TempDir Path tmp;

  static List<String> goldenNames() {
    List<String> names = new ArrayList<>();
    for (String t : List.of("f4", "f8", "f2", "i1", "u1", "i2", "i4", "i8", "b1"))
      for (String o : List.of("C", "F"))
        for (String e : List.of("le", "be")) {
          if (t.equals("b1") || t.equals("i1") || t.equals("u1")) {
            if (e.equals("be")) continue;
          }
          names.add(t + "_" + o + "_" + e);
        }
    return names;
  }

  @ParameterizedTest
  @MethodSource("goldenNames")
  void readsExactlyNumpysValues(String name) throws IOException {
    Golden.Expected want = Golden.expected(name);
    assertThat(readAll(Golden.path(name + ".npy"), 2)).as(name).containsExactly(want.values());
    try (NpyReader r = NpyReader.open(Golden.path(name + ".npy"))) {
      assertThat(r.rows()).isEqualTo(want.rows());
      assertThat(r.cols()).isEqualTo(want.cols());
      assertThat(r.header().fortranOrder()).isEqualTo(name.contains("_F_"));
      if (r.exactInFloat()) {
        float[] f = new float[want.values().length];
        assertThat(r.read(f, want.rows())).isEqualTo(want.rows());
        for (int i = 0; i < f.length; i++) assertThat((double) f[i]).as(name + " float " + i).isEqualTo(want.values()[i]);
      }
    }
  }

  /**
   * uint64 above 2^63 (golden formats/u8_high*.npy; reference: NumPy 2.4 np.save, values by its
   * astype(np.float64), see tools/golden/make_formats.py): halving the value and rounding the
   * half made ties that the whole value does not have, so 2^63 + 1025 read as 2^63 instead of
   * 2^63 + 2048, one unit in the last place off with exit code 0.
   */
  @Test
  void uint64AboveTwoToThe63RoundsAsNumpyDoes() throws IOException {
    Golden.Expected want = Golden.expected("formats/u8_high");
    for (String f : List.of("formats/u8_high.npy", "formats/u8_high_F_be.npy"))
      assertThat(readAll(Golden.path(f), 2)).as(f).containsExactly(want.values());
  }

  @Test
  void formatVersions1_2_3() throws IOException {
    Golden.Expected want = Golden.expected("version");
    for (String v : List.of("1_0", "2_0", "3_0")) {
      try (NpyReader r = NpyReader.open(Golden.path("version_" + v + ".npy"))) {
        assertThat(r.header().major()).isEqualTo(v.charAt(0) - '0');
      }
      assertThat(readAll(Golden.path("version_" + v + ".npy"), 1)).as(v).containsExactly(want.values());
    }
  }

  @Test
  void threeDimensionalRowsAreFlattenedInCOrderWhateverTheMemoryOrder() throws IOException {
    Golden.Expected want = Golden.expected("cube_f4");
    assertThat(want.cols()).isEqualTo(6);
    assertThat(readAll(Golden.path("cube_f4_C_le.npy"), 3)).containsExactly(want.values());
    assertThat(readAll(Golden.path("cube_f4_F_le.npy"), 3)).containsExactly(want.values());
  }

  /**
   * 1-D arrays written by np.save (golden vector_*.npy, shape (6,)) are refused, naming the file and
   * the shape and saying how to save one row or one column, also as an .npz member beside a good one.
   */
  @Test
  void oneDimensionalArraysAreRefusedWithTheShapesThatWouldDo() throws IOException {
    for (String name : List.of("vector_f4.npy", "vector_u1.npy"))
      assertThatThrownBy(() -> NpyReader.open(Golden.path(name))).as(name).isInstanceOf(BadInputException.class)
          .hasMessageContaining(name).hasMessageContaining("(6,) is a 1-D array").hasMessageContaining("(1, 6) for one row")
          .hasMessageContaining("(6, 1) for one column").hasMessageNotContaining("`layers`");
    try (NpzReader npz = NpzReader.open(Golden.path("vector_member.npz"))) {
      try (NpyReader good = npz.member("first")) {
        assertThat(good.cols()).isEqualTo(5);
      }
      assertThatThrownBy(() -> npz.member("flat")).isInstanceOf(BadInputException.class).hasMessageContaining("vector_member.npz")
          .hasMessageContaining("flat").hasMessageContaining("(6,) is a 1-D array").hasMessageContaining("`layers`");
    }
    // the same refusal for a 1-D array in Fortran order
    Path f = rewriteHeader("vector_f4.npy", "'fortran_order': False", "'fortran_order': True ");
    assertThatThrownBy(() -> NpyReader.open(f)).isInstanceOf(BadInputException.class).hasMessageContaining("(6,) is a 1-D array");
    // a (6, 1) column, the fix the message proposes, reads as 6 rows of one value
    Path col = rewriteHeader("vector_f4.npy", "(6,)", "(6, 1)");
    try (NpyReader r = NpyReader.open(col)) {
      assertThat(r.rows()).isEqualTo(6);
      assertThat(r.cols()).isEqualTo(1);
    }
  }

  @Test
  void nanAndInfinityNameRowAndColumn() {
    assertThatThrownBy(() -> readAll(Golden.path("nan_f4.npy"), 10))
        .isInstanceOf(BadInputException.class).hasMessageContaining("nan_f4.npy").hasMessageContaining("row 1, column 1").hasMessageContaining("NaN");
    assertThatThrownBy(() -> readAll(Golden.path("inf_f8.npy"), 10))
        .isInstanceOf(BadInputException.class).hasMessageContaining("inf_f8.npy").hasMessageContaining("row 2, column 0").hasMessageContaining("infinity");
  }

  @Test
  void fortranOrderAcrossManyChunks() throws IOException {
    // More rows than one chunk holds: column-strided reads must stitch chunks correctly.
    int n = NpyReader.CHUNK_BYTES / 4 + 777, d = 3;
    Path f = tmp.resolve("big_f.npy");
    byte[] head = NpyHeader.write(NpyDtype.FLOAT32, ByteOrder.BIG_ENDIAN, true, new long[] {n, d}, 0);
    ByteBuffer data = ByteBuffer.allocate(n * d * 4).order(ByteOrder.BIG_ENDIAN);
    for (int c = 0; c < d; c++) for (int r = 0; r < n; r++) data.putFloat(r * 10f + c);
    Files.write(f, concat(head, data.array()));
    try (NpyReader r = NpyReader.open(f)) {
      float[] buf = new float[1000 * d];
      long row = 0;
      int m;
      while ((m = r.read(buf, 1000)) > 0) {
        for (int i = 0; i < m; i++)
          for (int c = 0; c < d; c++) assertThat(buf[i * d + c]).isEqualTo((row + i) * 10f + c);
        row += m;
      }
      assertThat(row).isEqualTo(n);
    }
  }

  @Test
  void nanDeepInsideALargeFileIsFoundByRowInBothOrders() throws IOException {
    int n = 100_000, d = 3;
    long badRow = 70_001;
    for (boolean fortran : new boolean[] {false, true}) {
      Path f = tmp.resolve("deep-" + fortran + ".npy");
      byte[] head = NpyHeader.write(NpyDtype.FLOAT32, ByteOrder.LITTLE_ENDIAN, fortran, new long[] {n, d}, 0);
      ByteBuffer data = ByteBuffer.allocate(n * d * 4).order(ByteOrder.LITTLE_ENDIAN);
      for (int i = 0; i < n * d; i++) data.putFloat(i % 5 - 2f);
      int at = fortran ? (int) (2 * n + badRow) : (int) (badRow * d + 2);
      data.putFloat(at * 4, Float.NaN);
      Files.write(f, concat(head, data.array()));
      for (boolean asFloat : new boolean[] {false, true}) {
        assertThatThrownBy(() -> {
          try (NpyReader r = NpyReader.open(f)) {
            float[] fb = new float[4096 * d];
            double[] db = new double[4096 * d];
            while ((asFloat ? r.read(fb, 4096) : r.read(db, 4096)) > 0) {
              // keep reading
            }
          }
        }).as("fortran=" + fortran + " float=" + asFloat).isInstanceOf(BadInputException.class)
            .hasMessageContaining("row " + badRow + ", column 2").hasMessageContaining("NaN");
      }
    }
  }

  // ---- bad input: each refused with the file named and the field or place at fault

  @Test
  void wrongMagic() throws IOException {
    Path f = tmp.resolve("x.npy");
    Files.writeString(f, "PK\u0003\u0004 this is not numpy");
    assertThatThrownBy(() -> NpyReader.open(f)).isInstanceOf(BadInputException.class)
        .hasMessageContaining(f.toString()).hasMessageContaining("magic");
  }

  @Test
  void unsupportedDtype() throws IOException {
    Path f = rewriteHeader("f4_C_le.npy", "'<f4'", "'<c8'");
    assertThatThrownBy(() -> NpyReader.open(f)).isInstanceOf(BadInputException.class)
        .hasMessageContaining(f.toString()).hasMessageContaining("descr").hasMessageContaining("<c8");
    Path g = rewriteHeader("f4_C_le.npy", "'<f4'", "[('a', '<f4')]");
    assertThatThrownBy(() -> NpyReader.open(g)).isInstanceOf(BadInputException.class).hasMessageContaining("descr");
  }

  @Test
  void unsupportedVersion() throws IOException {
    byte[] b = Files.readAllBytes(Golden.path("f4_C_le.npy"));
    b[6] = 9;
    Path f = tmp.resolve("v9.npy");
    Files.write(f, b);
    assertThatThrownBy(() -> NpyReader.open(f)).isInstanceOf(BadInputException.class).hasMessageContaining("version 9.0");
  }

  @Test
  void headerDisagreesWithFileSize() throws IOException {
    byte[] b = Files.readAllBytes(Golden.path("f4_C_le.npy"));
    Path longer = tmp.resolve("longer.npy");
    Files.write(longer, concat(b, new byte[4]));
    assertThatThrownBy(() -> NpyReader.open(longer)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("longer.npy").hasMessageContaining("disagrees with the file size").hasMessageContaining("(5, 7)");
    Path shape = rewriteHeader("f4_C_le.npy", "(5, 7)", "(5, 8)");
    assertThatThrownBy(() -> NpyReader.open(shape)).isInstanceOf(BadInputException.class).hasMessageContaining("truncated");
  }

  @Test
  void truncatedDataAndHeader() throws IOException {
    byte[] b = Files.readAllBytes(Golden.path("f8_C_le.npy"));
    Path cut = tmp.resolve("cut.npy");
    Files.write(cut, Arrays.copyOf(b, b.length - 3));
    assertThatThrownBy(() -> NpyReader.open(cut)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("cut.npy").hasMessageContaining("truncated");
    Path head = tmp.resolve("head.npy");
    Files.write(head, Arrays.copyOf(b, 40));
    assertThatThrownBy(() -> NpyReader.open(head)).isInstanceOf(BadInputException.class).hasMessageContaining("truncated .npy header");
    Path tiny = tmp.resolve("tiny.npy");
    Files.write(tiny, Arrays.copyOf(b, 5));
    assertThatThrownBy(() -> NpyReader.open(tiny)).isInstanceOf(BadInputException.class).hasMessageContaining("tiny.npy");
  }

  @Test
  void malformedHeaderFields() throws IOException {
    Path f = rewriteHeader("f4_C_le.npy", "'fortran_order': False", "'fortran_order': 0    ");
    assertThatThrownBy(() -> NpyReader.open(f)).isInstanceOf(BadInputException.class).hasMessageContaining("fortran_order");
    Path g = rewriteHeader("f4_C_le.npy", "(5, 7)", "()    ");
    assertThatThrownBy(() -> NpyReader.open(g)).isInstanceOf(BadInputException.class).hasMessageContaining("shape");
    Path h = rewriteHeader("f4_C_le.npy", "'shape'", "'shapf'");
    assertThatThrownBy(() -> NpyReader.open(h)).isInstanceOf(BadInputException.class).hasMessageContaining("shape");
  }

  @Test
  void npzStoredAndDeflatedMembers() throws IOException {
    for (String z : List.of("layers_stored.npz", "layers_deflated.npz")) {
      try (NpzReader npz = NpzReader.open(Golden.path(z))) {
        assertThat(npz.names()).containsExactly("first", "second");
        for (String m : npz.names()) {
          Golden.Expected want = Golden.expected("layers_" + m);
          try (NpyReader r = npz.member(m)) {
            double[] got = new double[want.values().length];
            int rows = 0, k;
            double[] chunk = new double[2 * r.cols()];
            while ((k = r.read(chunk, 2)) > 0) {
              System.arraycopy(chunk, 0, got, rows * r.cols(), k * r.cols());
              rows += k;
            }
            assertThat(got).as(z + " " + m).containsExactly(want.values());
            if (z.contains("deflated") && m.equals("second")) assertThat(r.header().fortranOrder()).isTrue();
          }
        }
        assertThatThrownBy(() -> npz.member("third")).isInstanceOf(BadInputException.class).hasMessageContaining("third");
      }
    }
  }

  @Test
  void notAZip() throws IOException {
    Path f = tmp.resolve("bad.npz");
    Files.writeString(f, "hello");
    assertThatThrownBy(() -> NpzReader.open(f)).isInstanceOf(BadInputException.class).hasMessageContaining("bad.npz");
  }

  private Path rewriteHeader(String golden, String from, String to) throws IOException {
    byte[] b = Files.readAllBytes(Golden.path(golden));
    String s = new String(b, StandardCharsets.ISO_8859_1);
    int at = s.indexOf(from);
    assertThat(at).as("header contains " + from).isPositive().isLessThan(128);
    String t = s.substring(0, at) + to + s.substring(at + from.length());
    // keep the header length: eat or add spaces before the newline
    int nl = t.indexOf('\n');
    int diff = to.length() - from.length();
    if (diff > 0) t = t.substring(0, nl - diff) + t.substring(nl);
    else if (diff < 0) t = t.substring(0, nl) + " ".repeat(-diff) + t.substring(nl);
    Path f = tmp.resolve("edited-" + golden);
    Files.write(f, t.getBytes(StandardCharsets.ISO_8859_1));
    return f;
  }

  static byte[] concat(byte[] a, byte[] b) {
    byte[] c = Arrays.copyOf(a, a.length + b.length);
    System.arraycopy(b, 0, c, a.length, b.length);
    return c;
  }

  static double[] readAll(Path f, int chunkRows) throws IOException {
    try (NpyReader r = NpyReader.open(f)) {
      double[] all = new double[Math.toIntExact(r.rows() * r.cols())];
      double[] chunk = new double[chunkRows * r.cols()];
      int rows = 0, k;
      while ((k = r.read(chunk, chunkRows)) > 0) {
        System.arraycopy(chunk, 0, all, rows * r.cols(), k * r.cols());
        rows += k;
      }
      return all;
    }
  }
}
