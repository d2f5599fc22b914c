package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import java.io.IOException;
import java.nio.file.Path;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** The float reference of {@code compare} refuses values it cannot square (they ended in a failed eigen-decomposition, exit 1). */
class CompareFloatsTest {
  @TempDir Path tmp;

  private Path f64(String name, double[] values, int cols) throws IOException {
    Path f = tmp.resolve(name);
    try (NpyWriter w = NpyWriter.create(f, NpyDtype.FLOAT64, cols)) {
      w.write(values, values.length / cols);
      w.commit();
    }
    return f;
  }

  @Test
  void floatsPastFloat32AreRefusedNamingRowAndColumn() throws IOException {
    Path ok = f64("ok.npy", new double[] {1, 2, 3, 4, 5, 6}, 2);
    assertThat(Compare.readFloats(ok, List.of()).values()).containsExactly(1, 2, 3, 4, 5, 6);
    Path big = f64("big.npy", new double[] {1, 2, 3, 4, 5, -1e300}, 2);
    assertThatThrownBy(() -> Compare.readFloats(big, List.of())).isInstanceOf(BadInputException.class)
        .hasMessageContaining("big.npy: row 2, column 1").hasMessageContaining("float32");
  }
}
