package io.actindex.encode.io;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.encode.Golden;
import java.io.IOException;
import java.nio.ByteOrder;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.MethodSource;

/**
 * Header forms the {@code .npy} format allows and forbids, as NumPy's reader decides them:
 * "A Simple File Format for NumPy Arrays" (NEP 1, Kern, 2007) and {@code read_array_header} in
 * numpy/lib/format.py (keys exactly descr/fortran_order/shape, shape a tuple of ints, fortran_order
 * a bool, a descr without byte order such as {@code 'f4'} in native order). The files and NumPy's
 * verdict on each ({@code golden/headers/cases.txt}: read, with its values, or refused) come from
 * {@code tools/golden/make_npy_headers.py}, which loads every file with {@code np.load}.
 */
class NpyHeaderFormsTest {
  record Case(String name, boolean numpyReads, String numpySays) {
    @Override
    public String toString() {
      return name + (numpyReads ? " (NumPy reads it)" : " (NumPy: " + numpySays + ")");
    }
  }

  static List<Case> cases() throws IOException {
    return Files.readAllLines(Golden.path("headers/cases.txt")).stream().filter(l -> !l.startsWith("#") && !l.isBlank())
        .map(l -> l.split(" ", 3)).map(p -> new Case(p[0], p[1].equals("read"), p.length > 2 ? p[2] : "")).toList();
  }

  @ParameterizedTest
  @MethodSource("cases")
  void readsWhatNumpyReadsAndRefusesWhatItRefuses(Case c) throws IOException {
    Path f = Golden.path("headers/" + c.name() + ".npy");
    if (!c.numpyReads()) {
      assertThatThrownBy(() -> NpyReader.open(f)).as(c.toString()).isInstanceOf(BadInputException.class)
          .hasMessageStartingWith(f.toString() + ":").hasMessageNotContaining("\n");
      return;
    }
    Golden.Expected want = Golden.expected("headers/" + c.name());
    assertThat(NpyReaderTest.readAll(f, 2)).as(c.toString()).containsExactly(want.values());
    try (NpyReader r = NpyReader.open(f)) {
      assertThat(r.rows()).isEqualTo(want.rows());
      assertThat(r.cols()).isEqualTo(want.cols());
      // a missing byte order is read as little-endian (see NpyHeader.parse)
      if (c.name().startsWith("noorder_")) assertThat(r.header().order()).isEqualTo(ByteOrder.LITTLE_ENDIAN);
    }
  }

  @ParameterizedTest
  @MethodSource("cases")
  void refusalsNameTheFieldAtFault(Case c) {
    if (c.numpyReads()) return;
    Path f = Golden.path("headers/" + c.name() + ".npy");
    // the field NumPy names, or the keys when the dict's keys are wrong
    String field = c.numpySays().startsWith("shape") ? "'shape'"
        : c.numpySays().startsWith("fortran_order") ? "'fortran_order'" : "keys";
    assertThatThrownBy(() -> NpyReader.open(f)).as(c.toString()).hasMessageContaining(field);
    if (c.name().equals("shape_list")) assertThatThrownBy(() -> NpyReader.open(f)).hasMessageContaining("a list [3, 4]");
  }
}
