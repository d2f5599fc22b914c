package io.actindex.encode;

import java.io.IOException;
import java.net.URISyntaxException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;

/** Access to the golden files under test resources (see golden/SOURCE.md for how they were made). */
public final class Golden {
  private Golden() {}

  public static Path path(String name) {
    try {
      var url = Golden.class.getResource("/golden/" + name);
      if (url == null) throw new IllegalStateException("missing golden file " + name);
      return Path.of(url.toURI());
    } catch (URISyntaxException e) {
      throw new IllegalStateException(e);
    }
  }

  /** NumPy's values: {rows, cols} and the row-major float64 values of NAME.txt. */
  public record Expected(int rows, int cols, double[] values) {}

  public static Expected expected(String name) throws IOException {
    List<String> lines = Files.readAllLines(path(name + ".txt"));
    String[] rc = lines.getFirst().split(" ");
    int r = Integer.parseInt(rc[0]), c = Integer.parseInt(rc[1]);
    double[] v = new double[r * c];
    for (int i = 0; i < v.length; i++) v[i] = Double.parseDouble(lines.get(i + 1));
    return new Expected(r, c, v);
  }

  /** One value per line. */
  public static double[] column(String name) throws IOException {
    return Files.readAllLines(path(name)).stream().mapToDouble(Double::parseDouble).toArray();
  }
}
