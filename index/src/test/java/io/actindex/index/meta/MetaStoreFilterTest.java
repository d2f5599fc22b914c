package io.actindex.index.meta;

import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.function.Predicate;
import org.apache.lucene.document.DoublePoint;
import org.apache.lucene.index.Term;
import org.apache.lucene.search.BooleanClause.Occur;
import org.apache.lucene.search.BooleanQuery;
import org.apache.lucene.search.MatchAllDocsQuery;
import org.apache.lucene.search.Query;
import org.apache.lucene.search.TermQuery;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * The ids a Lucene filter selects equal the ids a direct scan of the metadata rows selects, for
 * keyword terms, numeric ranges and their combinations, with empty values and deleted ids.
 */
class MetaStoreFilterTest {
  @TempDir Path tmp;

  private static final String[] COLORS = {"red", "green", "blue", "Red", "red green"};

  @Test
  void luceneFiltersEqualADirectScan() {
    for (int rep = 0; rep < 4; rep++) {
      long seed = Randoms.seed(rep);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = 200 + rnd.nextInt(300);
      CodeBlock codes = SyntheticCodes.uniform(n, 32, seed);
      List<Map<String, String>> rows = new ArrayList<>();
      for (int i = 0; i < n; i++) {
        Map<String, String> row = new HashMap<>();
        row.put("key", "key-" + rnd.nextLong());
        row.put("label", Integer.toString(rnd.nextInt(4)));
        row.put("split", rnd.nextInt(5) == 0 ? "test" : "train");
        row.put("color", rnd.nextInt(6) == 0 ? "" : COLORS[rnd.nextInt(COLORS.length)]);
        row.put("size", rnd.nextInt(8) == 0 ? "" : Double.toString(rnd.nextInt(-10000, 10000) / 100.0));
        rows.add(row);
      }
      RoaringBitmap deleted = new RoaringBitmap();
      Path dir = tmp.resolve("idx-" + rep);
      try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
        int cut = n / 2;
        w.add(codes.slice(0, cut), rows.subList(0, cut));
        for (int i = 0; i < 30; i++) deleted.add(rnd.nextInt(cut));
        w.delete(deleted.toArray());
        w.add(codes.slice(cut, n), rows.subList(cut, n));
        if (rep % 2 == 1) w.compact();
      }
      try (IndexReader r = IndexReader.open(dir)) {
        MetaStore meta = r.meta();
        assertEquals(MetaStore.FieldKind.KEYWORD, meta.fields().get("color"), why);
        assertEquals(MetaStore.FieldKind.NUMBER, meta.fields().get("size"), why);
        for (int q = 0; q < 40; q++) {
          String color = COLORS[rnd.nextInt(COLORS.length)];
          String label = Integer.toString(rnd.nextInt(4));
          double a = rnd.nextInt(-12000, 12000) / 100.0, b = rnd.nextInt(-12000, 12000) / 100.0;
          double lo = Math.min(a, b), hi = Math.max(a, b);
          Query colorQ = new TermQuery(new Term("color", color));
          Query labelQ = new TermQuery(new Term("label", label));
          Query sizeQ = DoublePoint.newRangeQuery("size", lo, hi);
          Predicate<Map<String, String>> colorP = m -> m.get("color").equals(color);
          Predicate<Map<String, String>> labelP = m -> m.get("label").equals(label);
          Predicate<Map<String, String>> sizeP = m -> !m.get("size").isEmpty()
              && Double.parseDouble(m.get("size")) >= lo && Double.parseDouble(m.get("size")) <= hi;
          String what = why + " color=" + color + " label=" + label + " size in [" + lo + "," + hi + "]";
          assertEquals(scan(rows, deleted, colorP), select(meta, colorQ), what);
          assertEquals(scan(rows, deleted, sizeP), select(meta, sizeQ), what);
          assertEquals(scan(rows, deleted, colorP.and(sizeP)),
              select(meta, and(colorQ, sizeQ)), what + " AND");
          assertEquals(scan(rows, deleted, labelP.or(sizeP)), select(meta, new BooleanQuery.Builder()
              .add(labelQ, Occur.SHOULD).add(sizeQ, Occur.SHOULD).build()), what + " OR");
          assertEquals(scan(rows, deleted, m -> !colorP.test(m) && m.get("split").equals("test")),
              select(meta, new BooleanQuery.Builder().add(new TermQuery(new Term("split", "test")), Occur.FILTER)
                  .add(colorQ, Occur.MUST_NOT).build()), what + " NOT");
        }
        assertEquals(scan(rows, deleted, m -> true), select(meta, new MatchAllDocsQuery()), why);
        for (int id = 0; id < n; id++) {
          Map<String, String> doc = meta.document(id);
          if (deleted.contains(id)) {
            assertEquals(null, doc, why);
            continue;
          }
          Map<String, String> expected = new HashMap<>(rows.get(id));
          expected.values().removeIf(String::isEmpty);
          assertEquals(expected, doc, why + " id " + id);
          assertEquals(id, meta.idOfKey(rows.get(id).get("key")), why);
        }
      }
    }
  }

  private static Query and(Query a, Query b) {
    return new BooleanQuery.Builder().add(a, Occur.FILTER).add(b, Occur.FILTER).build();
  }

  private static RoaringBitmap scan(List<Map<String, String>> rows, RoaringBitmap deleted,
      Predicate<Map<String, String>> p) {
    RoaringBitmap out = new RoaringBitmap();
    for (int id = 0; id < rows.size(); id++) if (!deleted.contains(id) && p.test(rows.get(id))) out.add(id);
    return out;
  }

  /** The store's answer as a bitmap, to compare with the one the test computes. */
  private static RoaringBitmap select(MetaStore meta, Query q) {
    return RoaringBitmap.bitmapOf(meta.select(q).toArray());
  }
}
