package io.actindex.encode;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.encode.io.ArrayMatrixReader;
import java.io.IOException;
import java.nio.file.Files;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * Activations beyond float32's range ({@link CodeStream#lastActivations(boolean)}): kept as the
 * float cast makes them when asked (a query's row), refused otherwise (what an index would keep), the
 * code made from the double either way. The expected floats are NumPy's casts
 * ({@code tools/golden/make_float32_overflow.py}, NumPy 2.4.6, {@code golden/float32_overflow.csv}),
 * which follow IEEE 754-2019 sections 4.3.1 (round to nearest, ties to even) and 7.4 (overflow to an
 * infinity of the value's sign): 3.5e38 is +Infinity, while a value within half a unit in the last
 * place above the largest float32 rounds to it and is kept.
 */
class FarActivationsTest {
  @Test
  void castsAsNumPyAndIeee754SayAndRefusesWithoutTheCast() throws IOException {
    List<String> lines = Files.readAllLines(Golden.path("float32_overflow.csv")).stream().filter(l -> !l.startsWith("#")).toList();
    assertThat(lines).hasSizeGreaterThan(10);
    int infinite = 0;
    for (String line : lines) {
      String[] f = line.split(",");
      double x = Double.parseDouble(f[0]);
      float want = switch (f[1]) {
        case "inf" -> Float.POSITIVE_INFINITY;
        case "-inf" -> Float.NEGATIVE_INFINITY;
        default -> (float) Double.parseDouble(f[1]); // a float32 value printed exactly as a double
      };
      double[][] rows = {{1, x}, {x, -1}};
      try (CodeStream s = Encoders.activations(() -> ArrayMatrixReader.of("q.npy", rows), "act", EncodeOptions.positive())) {
        long[] words = s.next(4).words();
        assertThat(words[0]).as(line + ": codes from the doubles").isEqualTo(0b01L | (x > 0 ? 0b10L : 0));
        assertThat(words[1]).as(line).isEqualTo(x > 0 ? 0b01L : 0);
        assertThat(s.lastActivations(true)).as(line).containsExactly(1f, want, want, -1f);
        if (Float.isInfinite(want)) {
          infinite++;
          assertThatThrownBy(s::lastActivations).as(line).isInstanceOf(BadInputException.class)
              .hasMessageStartingWith("q.npy: row 0, column 1 (0-based): value " + x + " does not fit the float32");
        } else assertThat(s.lastActivations()).as(line).containsExactly(1f, want, want, -1f);
      }
    }
    assertThat(infinite).as("golden rows past the range").isGreaterThan(5);
  }

  @Test
  void nanIsRefusedWithTheCastToo() {
    // the readers refuse NaN (file, row, column) before any cast: a NaN row is never answered as far
    assertThatThrownBy(() -> {
      try (CodeStream s = Encoders.activations(() -> ArrayMatrixReader.of("q.npy", new double[][] {{1, 2}, {Double.NaN, 1}}), "act",
          EncodeOptions.positive())) {
        s.next(4);
        s.lastActivations(true);
      }
    }).isInstanceOf(BadInputException.class).hasMessageContaining("q.npy").hasMessageContaining("row 1");
  }
}
