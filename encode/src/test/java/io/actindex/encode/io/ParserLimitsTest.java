package io.actindex.encode.io;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.encode.Golden;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.stream.Stream;
import java.util.zip.CRC32;
import java.util.zip.ZipEntry;
import java.util.zip.ZipOutputStream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Hostile files that escaped the readers' contract (a stack overflow, exit code 1, a damaged
 * archive read as numbers, binary bytes in messages) are refused with a {@link BadInputException}
 * whose message is one line naming the file.
 */
class ParserLimitsTest {
  @TempDir Path tmp;

  /** A version 1.0 .npy with any header text (not padded). */
  private Path npy(String name, String header, byte[] data) throws IOException {
    byte[] h = header.getBytes(StandardCharsets.ISO_8859_1);
    ByteBuffer b = ByteBuffer.allocate(10 + h.length + data.length).order(ByteOrder.LITTLE_ENDIAN);
    b.put(NpyHeader.MAGIC).put((byte) 1).put((byte) 0).putShort((short) h.length).put(h).put(data);
    return Files.write(tmp.resolve(name), b.array());
  }

  private static void oneLine(Throwable e, String file) {
    assertThat(e).isInstanceOf(BadInputException.class);
    assertThat(e.getMessage()).contains(file).doesNotContain("\n").doesNotContain("\r").hasSizeLessThan(400);
    assertThat(e.getMessage().chars().noneMatch(c -> c < 0x20)).as(e.getMessage()).isTrue();
  }

  @Test
  void deeplyNestedNpyHeaderIsRefusedWithoutStackOverflow() throws IOException {
    // 30,000 nested parentheses (a version 1.0 header holds at most 65,535 bytes); the parser stops at 32 levels
    String nested = "{'descr': '<f4', 'fortran_order': False, 'shape': " + "(".repeat(30_000) + ")".repeat(30_000) + "}\n";
    Path f = npy("nested.npy", nested, new byte[0]);
    assertThatThrownBy(() -> NpyReader.open(f)).satisfies(e -> oneLine(e, "nested.npy")).hasMessageContaining("nesting deeper than");
  }

  @Test
  void npyHeaderLengthZeroIsRefused() throws IOException {
    Path v1 = npy("zero.npy", "", new byte[16]);
    assertThatThrownBy(() -> NpyReader.open(v1)).satisfies(e -> oneLine(e, "zero.npy")).hasMessageContaining("header length is 0");
    ByteBuffer b = ByteBuffer.allocate(12 + 16).order(ByteOrder.LITTLE_ENDIAN);
    b.put(NpyHeader.MAGIC).put((byte) 2).put((byte) 0).putInt(0);
    Path v2 = Files.write(tmp.resolve("zero2.npy"), b.array());
    assertThatThrownBy(() -> NpyReader.open(v2)).satisfies(e -> oneLine(e, "zero2.npy"));
    Path one = npy("one.npy", "{", new byte[16]);
    assertThatThrownBy(() -> NpyReader.open(one)).satisfies(e -> oneLine(e, "one.npy"));
  }

  @Test
  void binaryBytesInAnNpyHeaderAreEscapedInTheMessage() throws IOException {
    Path f = npy("bin.npy", "{'descr': '<f4\u0000\u001b[2J\n', 'fortran_order': False, 'shape': (1, 1), }\n", new byte[4]);
    assertThatThrownBy(() -> NpyReader.open(f)).satisfies(e -> oneLine(e, "bin.npy")).hasMessageContaining("\\u0000\\u001b[2J\\n");
  }

  private static byte[] npyBytes(String golden) throws IOException {
    return Files.readAllBytes(Golden.path(golden));
  }

  /** A zip written by the JDK with the given members (stored when {@code stored}), as {@code np.savez} would hold them. */
  private Path zip(String name, boolean stored, String[] names, byte[]... members) throws IOException {
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    try (ZipOutputStream z = new ZipOutputStream(bytes)) {
      for (int i = 0; i < names.length; i++) {
        ZipEntry e = new ZipEntry(names[i]);
        if (stored) {
          e.setMethod(ZipEntry.STORED);
          e.setSize(members[i].length);
          CRC32 c = new CRC32();
          c.update(members[i]);
          e.setCrc(c.getValue());
        }
        z.putNextEntry(e);
        z.write(members[i]);
        z.closeEntry();
      }
    }
    return Files.write(tmp.resolve(name), bytes.toByteArray());
  }

  private static double[] readMember(Path npz, String member) throws IOException {
    try (NpzReader z = NpzReader.open(npz); NpyReader r = z.member(member)) {
      double[] out = new double[(int) (r.rows() * r.cols())];
      r.read(out, (int) r.rows());
      return out;
    }
  }

  @Test
  void damagedNpzMemberIsRefusedByItsCrc() throws IOException {
    byte[] member = npyBytes("f8_C_le.npy");
    Path good = zip("good.npz", true, new String[] {"a.npy"}, member);
    Golden.Expected ex = Golden.expected("f8_C_le");
    assertThat(readMember(good, "a")).containsExactly(ex.values());
    // flip one bit of the last value's data inside the archive: the zip structure stays valid
    byte[] z = Files.readAllBytes(good);
    int at = indexOf(z, member) + member.length - 3;
    z[at] ^= 0x10;
    Path bad = Files.write(tmp.resolve("bad.npz"), z);
    assertThatThrownBy(() -> readMember(bad, "a")).satisfies(e -> oneLine(e, "bad.npz[a]")).hasMessageContaining("CRC-32");
    // a Fortran-order member is copied whole before reading: checked on the copy
    byte[] fortran = npyBytes("f8_F_le.npy");
    byte[] zf = Files.readAllBytes(zip("f.npz", true, new String[] {"f.npy"}, fortran));
    zf[indexOf(zf, fortran) + fortran.length - 1] ^= 0x01;
    Path badF = Files.write(tmp.resolve("badf.npz"), zf);
    assertThatThrownBy(() -> readMember(badF, "f")).satisfies(e -> oneLine(e, "badf.npz[f]")).hasMessageContaining("CRC-32");
  }

  @Test
  void duplicateNpzMembersAreRefused() throws IOException {
    byte[] m = npyBytes("f4_C_le.npy");
    // the JDK's writer refuses duplicate names, so write a.npy and b.npy and rename b to a in place
    byte[] z = Files.readAllBytes(zip("two.npz", true, new String[] {"a.npy", "b.npy"}, m, m));
    for (int i = 0; i + 5 <= z.length; i++)
      if (z[i] == 'b' && z[i + 1] == '.' && z[i + 2] == 'n' && z[i + 3] == 'p' && z[i + 4] == 'y') z[i] = 'a';
    Path dup = Files.write(tmp.resolve("dup.npz"), z);
    assertThatThrownBy(() -> NpzReader.open(dup).close()).satisfies(e -> oneLine(e, "dup.npz")).hasMessageContaining("two members named 'a.npy'");
  }

  @Test
  void safetensorsHeaderMustBeStrictUtf8WithCappedNesting() throws IOException {
    byte[] json = "{\"a\u00ff\":{\"dtype\":\"F32\",\"shape\":[1],\"data_offsets\":[0,4]}}".getBytes(StandardCharsets.ISO_8859_1);
    Path bad = safetensors("latin1.safetensors", json, new byte[4]);
    assertThatThrownBy(() -> SafetensorsReader.open(bad).close()).satisfies(e -> oneLine(e, "latin1.safetensors"))
        .hasMessageContaining("not valid UTF-8").hasMessageContaining("header byte 3");
    byte[] deep = ("[".repeat(100_000) + "]".repeat(100_000)).getBytes(StandardCharsets.US_ASCII);
    Path nested = safetensors("deep.safetensors", deep, new byte[0]);
    assertThatThrownBy(() -> SafetensorsReader.open(nested).close()).satisfies(e -> oneLine(e, "deep.safetensors")).hasMessageContaining("nesting");
    byte[] ctl = "{\"x\\u0000\\n\\u001b\":{\"dtype\":\"Q9\",\"shape\":[1],\"data_offsets\":[0,4]}}".getBytes(StandardCharsets.US_ASCII);
    Path c = safetensors("ctl.safetensors", ctl, new byte[4]);
    assertThatThrownBy(() -> SafetensorsReader.open(c).close()).satisfies(e -> oneLine(e, "ctl.safetensors")).hasMessageContaining("'x\\u0000\\n\\u001b'");
  }

  @Test
  void modelsHeldInMemoryAreNamedAsGiven() {
    byte[] junk = new byte[20];
    assertThatThrownBy(() -> SafetensorsReader.open("idx/model.safetensors (the model stored in the index)", junk).close())
        .satisfies(e -> oneLine(e, "idx/model.safetensors (the model stored in the index)"));
  }

  @Test
  void fortranSpillFilesLiveInTheSpillFolderAndStaleOnesAreCleaned() throws IOException {
    Path spill = tmp.resolve("spill");
    String old = System.getProperty("actindex.spill.dir");
    System.setProperty("actindex.spill.dir", spill.toString());
    try {
      Files.createDirectories(spill);
      long dead = ProcessHandle.current().pid() + 4_000_000_000L; // beyond any pid the kernel hands out
      Path stale = Files.write(spill.resolve(dead + "-12345.npy"), new byte[100]);
      Path mine = Files.write(spill.resolve(ProcessHandle.current().pid() + "-other.npy"), new byte[100]);
      Path foreign = Files.write(spill.resolve("notes.txt"), new byte[1]);
      SpillFiles.resetForTest();
      Path npz = zip("fortran.npz", false, new String[] {"f.npy"}, npyBytes("f8_F_le.npy"));
      try (NpzReader z = NpzReader.open(npz)) {
        assertThat(stale).as("a dead process's spill file is removed at the next start").doesNotExist();
        assertThat(mine).as("a live process's spill file stays").exists();
        assertThat(foreign).exists();
        try (NpyReader r = z.member("f")) {
          assertThat(listNpy(spill)).hasSize(2); // ours, and the copy of f
          double[] out = new double[(int) (r.rows() * r.cols())];
          r.read(out, (int) r.rows());
          assertThat(out).containsExactly(Golden.expected("f8_F_le").values());
        }
        assertThat(listNpy(spill)).containsExactly(mine);
      }
    } finally {
      if (old == null) System.clearProperty("actindex.spill.dir");
      else System.setProperty("actindex.spill.dir", old);
      SpillFiles.resetForTest();
    }
  }

  private static List<Path> listNpy(Path dir) throws IOException {
    try (Stream<Path> s = Files.list(dir)) {
      return s.filter(p -> p.toString().endsWith(".npy")).toList();
    }
  }

  private Path safetensors(String name, byte[] json, byte[] data) throws IOException {
    ByteBuffer b = ByteBuffer.allocate(8 + json.length + data.length).order(ByteOrder.LITTLE_ENDIAN);
    b.putLong(json.length).put(json).put(data);
    return Files.write(tmp.resolve(name), b.array());
  }

  private static int indexOf(byte[] hay, byte[] needle) {
    outer:
    for (int i = 0; i + needle.length <= hay.length; i++) {
      for (int j = 0; j < needle.length; j++) if (hay[i + j] != needle[j]) continue outer;
      return i;
    }
    throw new AssertionError("not found");
  }
}
