package io.actindex.encode;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Arrays;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Pre-binarized codes against NumPy: bool, 0/1 uint8, 0/1 in wider integer and float dtypes and
 * np.packbits (bitorder 'big', most significant bit first) files written by NumPy
 * (tools/golden/make_npy.py).
 */
class CodeFilesTest {
  @TempDir Path tmp;

  private static CodeBlock read(Path f, CodeLayout layout) throws IOException {
    try (CodeStream s = Encoders.codes(f, layout)) {
      return EncodersTest.all(s, 4);
    }
  }

  @Test
  void boolUint8AndPackedFromNumpyGiveTheSameBits() throws IOException {
    Golden.Expected want = Golden.expected("codes"); // 9 x 21 booleans
    CodeLayout layout = CodeLayout.parse("a:10,b:11");
    CodeBlock bools = read(Golden.path("codes_bool.npy"), null);
    assertThat(bools.layout()).isEqualTo(CodeLayout.single("code", 21));
    for (int i = 0; i < want.values().length; i++) assertThat(bools.bit(i / 21, i % 21)).isEqualTo(want.values()[i] != 0);
    CodeBlock u8 = read(Golden.path("codes_u8.npy"), layout);
    CodeBlock packed = read(Golden.path("codes_packed.npy"), layout);
    assertThat(u8.layout()).isEqualTo(layout);
    assertThat(u8.words()).containsExactly(bools.words());
    assertThat(packed.words()).containsExactly(bools.words());
  }

  @Test
  void zeroOneInAnyNumericDtypeFromNumpyGivesTheSameBits() throws IOException {
    // NumPy's own files of the same codes: (bits).astype(int), float32, and big-endian int32 in
    // Fortran order (tools/golden/make_npy.py)
    CodeBlock bools = read(Golden.path("codes_bool.npy"), null);
    CodeLayout layout = CodeLayout.parse("a:10,b:11");
    for (String f : new String[] {"codes_i8.npy", "codes_f4.npy", "codes_i4_F_be.npy"}) {
      assertThat(read(Golden.path(f), null).words()).as(f).containsExactly(bools.words());
      assertThat(read(Golden.path(f), layout).layout()).as(f).isEqualTo(layout);
    }
    // one value other than 0 and 1 is refused by row and column (NumPy put -1 at [4, 7] and 0.5 at [2, 20])
    assertThatThrownBy(() -> read(Golden.path("codes_i2_stray.npy"), null)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("codes_i2_stray.npy").hasMessageContaining("row 4, column 7: value -1 is not 0 or 1");
    assertThatThrownBy(() -> read(Golden.path("codes_f8_stray.npy"), layout)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("codes_f8_stray.npy").hasMessageContaining("row 2, column 20: value 0.5 is not 0 or 1");
  }

  @Test
  void writtenPackedFileIsByteIdenticalToNumpysPackbits() throws IOException {
    CodeLayout layout = CodeLayout.single("code", 21);
    for (CodeFiles.Form form : CodeFiles.Form.values()) {
      Path out = tmp.resolve(form + ".npy");
      try (CodeStream s = Encoders.codes(Golden.path("codes_bool.npy"), null)) {
        assertThat(CodeFiles.write(out, s, form)).isEqualTo(9);
      }
      String golden = switch (form) {
        case PACKED -> "codes_packed.npy";
        case BOOL -> "codes_bool.npy";
        case UINT8 -> "codes_u8.npy";
      };
      // NumPy pads the header to 64 bytes just as the writer does, so the files match byte for byte.
      assertThat(Files.readAllBytes(out)).as(form.toString()).isEqualTo(Files.readAllBytes(Golden.path(golden)));
      assertThat(read(out, form == CodeFiles.Form.PACKED ? layout : null).words())
          .containsExactly(read(Golden.path("codes_bool.npy"), null).words());
    }
  }

  /**
   * Codes packed least significant bit first (golden formats/codes_packed_little.npy; reference:
   * NumPy 2.4 np.packbits(bitorder='little'), see tools/golden/make_formats.py) put code bits 16-18
   * where NumPy's default order keeps the padding of the last byte: refused, naming that order.
   */
  @Test
  void codesPackedInLittleBitOrderAreRefusedNamingTheOrder() throws IOException {
    Golden.Expected bits = Golden.expected("formats/codes_packed_little"); // 9 x 21 booleans
    boolean inPadding = false;
    for (int r = 0; r < bits.rows(); r++) for (int c = 16; c <= 18; c++) inPadding |= bits.values()[r * bits.cols() + c] != 0;
    assertThat(inPadding).as("some code has one of bits 16-18 set").isTrue();
    assertThatThrownBy(() -> read(Golden.path("formats/codes_packed_little.npy"), CodeLayout.single("c", 21))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("codes_packed_little.npy").hasMessageContaining("padding bit").hasMessageContaining("bitorder='little'");
  }

  @Test
  void badCodes() throws IOException {
    Path twos = tmp.resolve("twos.npy");
    try (NpyWriter w = NpyWriter.create(twos, NpyDtype.UINT8, 3)) {
      w.writeBytes(new byte[] {0, 1, 1, 1, 2, 0}, 2);
      w.commit();
    }
    assertThatThrownBy(() -> read(twos, null)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("twos.npy").hasMessageContaining("row 1, column 1").hasMessageContaining("not 0 or 1");
    // a padding bit beyond the layout's 21 bits is set in byte 2
    Path pad = tmp.resolve("pad.npy");
    byte[] row = {(byte) 0xff, 0, 0x04};
    try (NpyWriter w = NpyWriter.create(pad, NpyDtype.UINT8, 3)) {
      w.writeBytes(row, 1);
      w.commit();
    }
    assertThatThrownBy(() -> read(pad, CodeLayout.single("c", 21))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("row 0, column 2").hasMessageContaining("padding");
    // a 1-bit code packed by np.packbits has the shape of the unpacked one and is read as 0/1:
    // the refusal says so rather than asking for the layout it was given (found by tools/audit/shapes_fuzz.py)
    Path onePacked = tmp.resolve("one_packed.npy");
    try (NpyWriter w = NpyWriter.create(onePacked, NpyDtype.UINT8, 1)) {
      w.writeBytes(new byte[] {0, (byte) 0x80}, 2);
      w.commit();
    }
    assertThatThrownBy(() -> read(onePacked, CodeLayout.single("z", 1))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("one_packed.npy").hasMessageContaining("row 1, column 0: value 128 is not 0 or 1")
        .hasMessageContaining("1-bit code").hasMessageNotContaining("need the code layout");
    assertThatThrownBy(() -> read(onePacked, null)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("need the code layout");
    // shape does not match the index layout
    assertThatThrownBy(() -> read(Golden.path("codes_bool.npy"), CodeLayout.single("c", 30))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("codes_bool.npy").hasMessageContaining("shape").hasMessageContaining("c:30");
    // activations given as codes: refused at their first value other than 0 and 1
    assertThatThrownBy(() -> read(Golden.path("f4_C_le.npy"), null)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("f4_C_le.npy").hasMessageContaining("row 0, column 0: value -13.125 is not 0 or 1");
  }

  @Test
  void packUnpackRoundTripAcrossWordBoundaries() {
    java.util.SplittableRandom rnd = new java.util.SplittableRandom(io.actindex.core.Randoms.seed(1));
    for (int bits : new int[] {1, 7, 8, 9, 63, 64, 65, 130}) {
      boolean[][] rows = new boolean[5][bits];
      for (boolean[] r : rows) for (int b = 0; b < bits; b++) r[b] = rnd.nextBoolean();
      CodeBlock c = CodeBlock.fromBits(CodeLayout.single("c", bits), rows);
      byte[] p = CodeFiles.pack(c);
      assertThat(p.length).isEqualTo(5 * ((bits + 7) / 8));
      for (int i = 0; i < 5; i++)
        for (int b = 0; b < bits; b++)
          assertThat((p[i * ((bits + 7) / 8) + b / 8] >> (7 - b % 8) & 1) == 1).isEqualTo(rows[i][b]);
      byte[] u = CodeFiles.unpack(c);
      for (int i = 0; i < 5; i++) assertThat(Arrays.copyOfRange(u, i * bits, (i + 1) * bits)).containsExactly(toBytes(rows[i]));
    }
  }

  /**
   * Reading decodes eight bytes at a time: files of every form written by the per-bit {@link
   * CodeFiles#pack}/{@link CodeFiles#unpack} read back to the same codes at widths around the
   * 8-byte and 64-bit steps, a bool byte other than 0/1 reads as set (any non-zero byte is True), and
   * a bad value or a padding bit inside an eight-byte group is named by its own row and column.
   */
  @Test
  void readingAgreesWithThePerBitWriterAtEveryWidth() throws IOException {
    long seed = io.actindex.core.Randoms.seed(2);
    java.util.SplittableRandom rnd = new java.util.SplittableRandom(seed);
    for (int bits : new int[] {1, 7, 8, 9, 15, 16, 17, 63, 64, 65, 127, 128, 130, 256, 300}) {
      CodeBlock c = io.actindex.core.SyntheticCodes.uniform(37, bits, rnd.nextLong());
      CodeLayout layout = c.layout();
      for (CodeFiles.Form form : CodeFiles.Form.values()) {
        if (form == CodeFiles.Form.PACKED && bits == 1) continue; // one uint8 column reads as unpacked
        Path f = tmp.resolve(bits + "-" + form + ".npy");
        try (NpyWriter w = form == CodeFiles.Form.PACKED ? NpyWriter.create(f, NpyDtype.UINT8, (bits + 7) / 8)
            : NpyWriter.create(f, form == CodeFiles.Form.BOOL ? NpyDtype.BOOL : NpyDtype.UINT8, bits)) {
          w.writeBytes(form == CodeFiles.Form.PACKED ? CodeFiles.pack(c) : CodeFiles.unpack(c), c.size());
          w.commit();
        }
        assertThat(read(f, form == CodeFiles.Form.PACKED ? layout : null).words())
            .as("bits %d, %s, seed %x", bits, form, seed).containsExactly(c.words());
      }
      byte[] bools = CodeFiles.unpack(c);
      for (int i = 0; i < bools.length; i++) if (bools[i] != 0) bools[i] = (byte) (1 + rnd.nextInt(255));
      Path f = tmp.resolve(bits + "-boolbytes.npy");
      try (NpyWriter w = NpyWriter.create(f, NpyDtype.BOOL, bits)) {
        w.writeBytes(bools, c.size());
        w.commit();
      }
      assertThat(read(f, null).words()).as("bits %d, seed %x", bits, seed).containsExactly(c.words());
    }
    Path twos = tmp.resolve("twos20.npy");
    byte[] rows = new byte[2 * 20];
    rows[20 + 11] = 2;
    try (NpyWriter w = NpyWriter.create(twos, NpyDtype.UINT8, 20)) {
      w.writeBytes(rows, 2);
      w.commit();
    }
    assertThatThrownBy(() -> read(twos, null)).isInstanceOf(BadInputException.class).hasMessageContaining("row 1, column 11: value 2");
    Path pad = tmp.resolve("pad60.npy"); // 60 bits in 8 packed bytes; bit 62 is padding (byte 7, bit 6 from the top)
    byte[] packed = new byte[8];
    packed[7] = 0x02;
    try (NpyWriter w = NpyWriter.create(pad, NpyDtype.UINT8, 8)) {
      w.writeBytes(packed, 1);
      w.commit();
    }
    assertThatThrownBy(() -> read(pad, CodeLayout.single("c", 60))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("row 0, column 7: padding bit 6 (code bit 62)");
  }

  private static byte[] toBytes(boolean[] b) {
    byte[] out = new byte[b.length];
    for (int i = 0; i < b.length; i++) out[i] = (byte) (b[i] ? 1 : 0);
    return out;
  }
}
