package io.actindex.query;

import io.actindex.core.CodeBlock;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;

/** Writes test indexes straight through the store (no encoding), in several segments. */
final class TestIndexes {
  private TestIndexes() {}

  static final String[] LABELS = {"cat", "dog", "owl"};
  static final String[] SPLITS = {"train", "test"};

  /** Metadata rows: key k<i>, a label (1 in 7 rows has none), a split, a number "score" 0..9. */
  static List<Map<String, String>> rows(int from, int n, SplittableRandom rnd) {
    List<Map<String, String>> rows = new ArrayList<>();
    for (int i = from; i < from + n; i++) {
      Map<String, String> r = new HashMap<>();
      r.put("key", "k" + i);
      if (rnd.nextInt(7) != 0) r.put("label", LABELS[rnd.nextInt(LABELS.length)]);
      r.put("split", SPLITS[rnd.nextInt(2)]);
      r.put("score", Integer.toString(rnd.nextInt(10)));
      rows.add(r);
    }
    return rows;
  }

  /** Writes {@code codes} with {@code meta} in {@code parts} segments. */
  static void write(Path dir, CodeBlock codes, List<Map<String, String>> meta, int parts) {
    try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
      int n = codes.size();
      for (int p = 0; p < parts; p++) {
        int from = n * p / parts, to = n * (p + 1) / parts;
        w.add(codes.slice(from, to), meta == null ? null : meta.subList(from, to));
      }
    }
  }
}
