package io.actindex.query;

import io.actindex.core.CodeBlock;
import io.actindex.encode.Encoders;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.net.URISyntaxException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.HashMap;
import java.util.Map;

/**
 * One folder of committed golden files on the test class path ({@code /golden/DIR/}), written by a
 * script under tools/golden/, and its {@code expected.txt} of {@code KEY VALUE} lines ({@code #}
 * starts a comment line).
 */
final class GoldenFiles {
  private final String dir;
  private Map<String, Double> expected;

  GoldenFiles(String dir) {
    this.dir = dir;
  }

  Path path(String name) {
    try {
      var url = GoldenFiles.class.getResource("/golden/" + dir + "/" + name);
      if (url == null) throw new IllegalStateException("missing golden file " + dir + "/" + name);
      return Path.of(url.toURI());
    } catch (URISyntaxException e) {
      throw new IllegalStateException(e);
    }
  }

  CodeBlock codes(String name) throws IOException {
    try (var s = Encoders.codes(path(name), null)) {
      return Encoders.readAll(s);
    }
  }

  /** The value of {@code key} in expected.txt. */
  double exp(String key) {
    if (expected == null) {
      Map<String, Double> m = new HashMap<>();
      try {
        for (String line : Files.readAllLines(path("expected.txt"))) {
          if (line.startsWith("#") || line.isBlank()) continue;
          String[] kv = line.split(" ");
          m.put(kv[0], Double.parseDouble(kv[1]));
        }
      } catch (IOException e) {
        throw new UncheckedIOException(e);
      }
      expected = m;
    }
    Double v = expected.get(key);
    if (v == null) throw new IllegalStateException("no expected value " + key + " in golden/" + dir + "/expected.txt");
    return v;
  }
}
