package io.actindex.index.meta;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import org.apache.lucene.index.Term;
import org.apache.lucene.search.BooleanClause.Occur;
import org.apache.lucene.search.BooleanQuery;
import org.apache.lucene.search.FieldExistsQuery;
import org.apache.lucene.search.MatchAllDocsQuery;
import org.apache.lucene.search.Query;
import org.apache.lucene.search.TermInSetQuery;
import org.apache.lucene.search.TermQuery;
import org.apache.lucene.util.BytesRef;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * Ids added without metadata have no Lucene document: their row {key: row-ID} is synthesized, found
 * by key, and filters select them exactly as if the document existed (checked against a direct
 * evaluation of each filter on the rows), deleted ones never.
 */
class BareIdsTest {
  @TempDir Path tmp;

  @Test
  void bareIdsBehaveLikeDocumentsWithOnlyAKey() {
    CodeBlock codes = SyntheticCodes.uniform(40, 32, 5);
    Path dir = tmp.resolve("idx");
    List<Map<String, String>> rows = new ArrayList<>();
    for (int i = 0; i < 10; i++) {
      Map<String, String> row = new HashMap<>();
      row.put("key", "k" + i);
      row.put("label", i % 2 == 0 ? "a" : "b");
      rows.add(row);
    }
    try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
      w.add(codes.slice(0, 10), rows);
      w.add(codes.slice(10, 30), null);
      w.delete(3, 15);
      List<Map<String, String>> taken = List.of(Map.of("key", "row-12"));
      BadInputException e = assertThrows(BadInputException.class, () -> w.add(codes.slice(30, 31), taken));
      assertTrue(e.getMessage().contains("row-12"), e.getMessage());
      w.add(codes.slice(30, 31), List.of(Map.of("key", "row-15"))); // the key of a deleted bare id is free
      w.add(codes.slice(31, 40), null);
    }
    Map<Integer, Map<String, String>> truth = new HashMap<>();
    for (int id = 0; id < 40; id++) {
      if (id == 3 || id == 15) continue;
      Map<String, String> row = new HashMap<>();
      if (id < 10) row.putAll(rows.get(id));
      else row.put("key", id == 30 ? "row-15" : "row-" + id);
      truth.put(id, row);
    }
    try (IndexReader r = IndexReader.open(dir)) {
      MetaStore meta = r.meta();
      assertEquals(38, meta.numDocs());
      assertEquals(9 + 1, meta.documents());
      for (int id = 0; id < 40; id++) {
        if (truth.containsKey(id)) {
          assertEquals(truth.get(id), meta.document(id), "row of " + id);
          assertEquals(id, meta.idOfKey(truth.get(id).get("key")), "id of key of " + id);
        } else {
          assertNull(meta.document(id));
        }
      }
      assertEquals(-1, meta.idOfKey("row-3")); // id 3 has the documented key k3
      assertEquals(-1, meta.idOfKey("row-40"));
      check(meta, truth, new TermQuery(new Term("label", "a")), m -> "a".equals(m.get("label")));
      check(meta, truth, not(new TermQuery(new Term("label", "a"))), m -> !"a".equals(m.get("label")));
      check(meta, truth, new TermQuery(new Term("key", "row-12")), m -> "row-12".equals(m.get("key")));
      check(meta, truth, not(new TermQuery(new Term("key", "row-12"))), m -> !"row-12".equals(m.get("key")));
      check(meta, truth, new TermInSetQuery("key", List.of(new BytesRef("row-3"), new BytesRef("k4"), new BytesRef("row-33"),
          new BytesRef("row-15"))), m -> List.of("row-3", "k4", "row-33", "row-15").contains(m.get("key")));
      check(meta, truth, new FieldExistsQuery("label"), m -> m.containsKey("label"));
      check(meta, truth, new BooleanQuery.Builder().add(not(new TermQuery(new Term("label", "b"))), Occur.MUST)
          .add(not(new TermQuery(new Term("key", "row-20"))), Occur.MUST).build(),
          m -> !"b".equals(m.get("label")) && !"row-20".equals(m.get("key")));
      // the plain look-ups: a value in a column, one exact text (a bare id's key, a deleted id's, a reused one)
      for (String column : new String[] {"label", "key", "colour"})
        assertEquals(expected(truth, m -> m.containsKey(column)), bits(meta.selectHaving(column)), "having " + column);
      String[][] pairs = {{"label", "a"}, {"label", "b"}, {"label", "c"}, {"key", "row-12"}, {"key", "row-15"}, {"key", "row-3"},
          {"key", "k3"}, {"key", "k4"}, {"key", "row-40"}};
      for (String[] p : pairs)
        assertEquals(expected(truth, m -> p[1].equals(m.get(p[0]))), bits(meta.selectEqual(p[0], p[1])), p[0] + " = " + p[1]);
      // patterns, against java.util.regex on the rows (these constructs mean the same in both; bare ids' keys included)
      String[][] patterns = {{"label", "a|b"}, {"label", "[ac]"}, {"label", "x*"}, {"key", "row\\-1[0-9]"}, {"key", "k.*"},
          {"key", "(row\\-3|k3)0?"}, {"colour", ".+"}};
      for (String[] p : patterns)
        assertEquals(expected(truth, m -> m.get(p[0]) != null && java.util.regex.Pattern.matches(p[1], m.get(p[0]))),
            bits(meta.selectMatching(p[0], p[1])), p[0] + " ~ " + p[1]);
    }
  }

  /**
   * A key of the form row-N given to another id, while id N was still to come, made two examples
   * with one key: 'add --meta' gave id 200 the key row-204, a later 'add' without metadata gave id
   * 204 the synthesized row-204, and '--where key = row-204' found both. Such a key is refused; one
   * naming its own id, an id already given, or a deleted bare id stays accepted.
   */
  @Test
  void aKeyReservedForAnIdToComeIsRefused() {
    CodeBlock codes = SyntheticCodes.uniform(20, 32, 6);
    Path dir = tmp.resolve("idx");
    try (IndexWriter w = IndexWriter.create(dir, codes.layout(), Map.of())) {
      // the first batch too (ids 0 and 1; row-2 is id 2's)
      BadInputException first = assertThrows(BadInputException.class,
          () -> w.add(codes.slice(0, 2), List.of(Map.of("key", "a"), Map.of("key", "row-2"))));
      assertTrue(first.getMessage().contains("metadata row 1: key 'row-2'"), first.getMessage());
      w.add(codes.slice(0, 4), null);
      w.delete(1);
      for (String key : new String[] {"row-7", "row-6", "row-19"}) {
        List<Map<String, String>> rows = List.of(Map.of("key", "a"), Map.of("key", key));
        BadInputException e = assertThrows(BadInputException.class, () -> w.add(codes.slice(4, 6), rows), key);
        assertTrue(e.getMessage().contains("metadata row 1: key '" + key + "'"), e.getMessage());
      }
      // ids of the batch that have keys of their own (5 and 4, swapped), a deleted bare id (1)
      w.add(codes.slice(4, 7), List.of(Map.of("key", "row-5"), Map.of("key", "row-4"), Map.of("key", "row-1")));
      w.add(codes.slice(7, 10), null);
    }
    try (IndexReader r = IndexReader.open(dir)) {
      for (int id = 0; id < 10; id++) {
        if (id == 1) continue;
        String key = r.meta().document(id).get("key");
        assertEquals(id, r.meta().idOfKey(key), "the one id of key " + key);
      }
    }
  }

  private static Query not(Query q) {
    return new BooleanQuery.Builder().add(MatchAllDocsQuery.INSTANCE, Occur.FILTER).add(q, Occur.MUST_NOT).build();
  }

  private interface RowTest {
    boolean test(Map<String, String> row);
  }

  private static void check(MetaStore meta, Map<Integer, Map<String, String>> truth, Query q, RowTest want) {
    assertEquals(expected(truth, want), select(meta, q), q.toString());
  }

  /** The ids whose row passes {@code want}. */
  private static RoaringBitmap expected(Map<Integer, Map<String, String>> truth, RowTest want) {
    RoaringBitmap expected = new RoaringBitmap();
    for (Map.Entry<Integer, Map<String, String>> e : truth.entrySet()) if (want.test(e.getValue())) expected.add(e.getKey());
    return expected;
  }

  /** The store's answer as a bitmap, to compare with the one the test computes. */
  private static RoaringBitmap select(MetaStore meta, Query q) {
    return bits(meta.select(q));
  }

  private static RoaringBitmap bits(io.actindex.core.IdSet ids) {
    assertEquals(40, ids.size());
    return RoaringBitmap.bitmapOf(ids.toArray());
  }
}
