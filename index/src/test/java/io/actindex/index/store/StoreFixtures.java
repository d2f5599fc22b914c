package io.actindex.index.store;

import io.actindex.core.CodeBlock;
import io.actindex.core.SyntheticCodes;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.stream.Stream;

/** Small indexes and folder helpers for the store tests. */
final class StoreFixtures {
  private StoreFixtures() {}

  /** Rows with key, label, split and a numeric column for ids firstId..firstId+n-1. */
  static List<Map<String, String>> rows(int firstId, int n) {
    List<Map<String, String>> rows = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      Map<String, String> row = new HashMap<>();
      int id = firstId + i;
      row.put("key", "k" + id);
      row.put("label", "c" + id % 3);
      row.put("split", id % 4 == 0 ? "test" : "train");
      row.put("score", Double.toString(id * 0.5));
      rows.add(row);
    }
    return rows;
  }

  /**
   * An index of three segments of ReLU-like codes (the first codes of {@code sample}), each with
   * kept magnitudes (8, 4 and 8 bits), deletes, properties and an attachment; the writer is closed.
   */
  static void build(Path dir, CodeBlock sample) {
    try (IndexWriter w = IndexWriter.create(dir, sample.layout(), Map.of("model", "test"))) {
      int at = 0;
      int[] bits = {8, 4, 8};
      int[] sizes = {40, 25, 35};
      for (int s = 0; s < sizes.length; s++) {
        int n = sizes[s];
        w.add(sample.slice(at, at + n), magnitudes(sample, at, n, bits[s]), rows(at, n));
        at += n;
      }
      w.delete(3, 41, 77);
      w.putAttachment("weights", "not really weights".getBytes(java.nio.charset.StandardCharsets.UTF_8));
    }
  }

  /** Magnitudes of codes {@code from..from+n-1}: the value of an on bit grows with id and unit, off bits are 0. */
  static Magnitudes magnitudes(CodeBlock codes, int from, int n, int bits) {
    return Magnitudes.quantise(values(codes, from, n), n, codes.layout().bits(), bits);
  }

  static float[] values(CodeBlock codes, int from, int n) {
    int d = codes.layout().bits();
    float[] v = new float[n * d];
    for (int i = 0; i < n; i++)
      for (int j = 0; j < d; j++)
        if (codes.bit(from + i, j)) v[i * d + j] = 0.25f + ((from + i) * 7 + j) % 13 * 0.5f;
    return v;
  }

  static CodeBlock sample(long seed) {
    return SyntheticCodes.reluLike(100, 70, 30, seed).codes();
  }

  /** Every regular file under {@code dir}, sorted. */
  static List<Path> files(Path dir) {
    try (Stream<Path> s = Files.walk(dir)) {
      return s.filter(Files::isRegularFile).sorted().toList();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  static void copy(Path from, Path to) {
    try {
      for (Path f : files(from)) {
        Path t = to.resolve(from.relativize(f).toString());
        Files.createDirectories(t.getParent());
        Files.copy(f, t);
      }
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }
}
