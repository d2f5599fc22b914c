package io.actindex.query;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.AdversarialCodes;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.IdSet;
import io.actindex.core.PopcountReference;
import io.actindex.core.Randoms;
import io.actindex.index.meta.Where;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.function.Predicate;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * {@code --where} filters over a multi-segment index whose examples were added with metadata and
 * without (bare ids, whose row is only {@code key: row-ID}), then deleted, compacted (segments
 * merged, ids kept, so no longer contiguous) and added to again: the ids a filter selects equal a
 * direct evaluation of the expression on the rows (missing values match only negated comparisons,
 * as docs/where.md says), and k-NN under each filter equals {@link PopcountReference} (an
 * independent {@code Long.bitCount} loop; Hamming 1950) over live, matching ids, k-th distance ties
 * included (a few distinct codes copied many times).
 */
class FilterAfterCompactionTest {
  @TempDir Path tmp;

  /** An expression and its direct evaluation on a row (null values: missing). */
  private record Case(String expr, Predicate<Map<String, String>> want) {}

  private static double rpm(Map<String, String> row) {
    return Double.parseDouble(row.get("rpm"));
  }

  private static final List<Case> CASES = List.of(
      new Case("label = a", r -> "a".equals(r.get("label"))),
      new Case("label != a", r -> !"a".equals(r.get("label"))),
      new Case("not label = a", r -> !"a".equals(r.get("label"))),
      new Case("label not in (a, b)", r -> !"a".equals(r.get("label")) && !"b".equals(r.get("label"))),
      new Case("rpm > 5", r -> r.containsKey("rpm") && rpm(r) > 5),
      new Case("not (rpm > 5)", r -> !(r.containsKey("rpm") && rpm(r) > 5)),
      new Case("rpm != 5", r -> !(r.containsKey("rpm") && rpm(r) == 5)),
      new Case("rpm <= 5 or label = b", r -> r.containsKey("rpm") && rpm(r) <= 5 || "b".equals(r.get("label"))),
      new Case("key in (row-35, row-36, k3, row-200, row-95)", r -> List.of("row-35", "row-36", "k3", "row-200", "row-95").contains(r.get("key"))),
      new Case("key = row-35", r -> "row-35".equals(r.get("key"))),
      new Case("not key = row-40 and label != b", r -> !"row-40".equals(r.get("key")) && !"b".equals(r.get("label"))));

  @Test
  void filtersSelectAndSearchExactlyAfterDeletesCompactionAndAdds() {
    for (int rep = 0; rep < 3; rep++) run(rep);
  }

  private void run(int rep) {
    long seed = Randoms.seed(rep);
    SplittableRandom rnd = new SplittableRandom(seed);
    int bits = new int[] {65, 129, 300}[rep];
    CodeLayout layout = AdversarialCodes.layout(bits, rnd);
    CodeBlock pool = AdversarialCodes.codes(rep == 1 ? "uniform" : "fewDistinct", layout, 200, rnd);
    Path dir = tmp.resolve("idx-" + rep);
    Map<Integer, Map<String, String>> rows = new LinkedHashMap<>(); // every id ever added
    RoaringBitmap deleted = new RoaringBitmap();
    String why = Randoms.describe(seed) + " layout=" + layout;
    try (IndexWriter w = IndexWriter.create(dir, layout, Map.of())) {
      int used = 0;
      // documented, bare, documented: three segments
      used = add(w, pool, used, 30, true, rows, rnd);
      used = add(w, pool, used, 40, false, rows, rnd);
      used = add(w, pool, used, 20, true, rows, rnd);
      check(dir, pool, used, rows, deleted, rnd, why + " after adds");
      RoaringBitmap del = RoaringBitmap.bitmapOf(3, 35, 40, 89);
      for (int id = 0; id < used; id++) if (rnd.nextInt(4) == 0) del.add(id);
      w.delete(del.toArray());
      deleted.or(del);
      check(dir, pool, used, rows, deleted, rnd, why + " after deletes");
      w.compact();
      check(dir, pool, used, rows, deleted, rnd, why + " after compaction");
      used = add(w, pool, used, 10, false, rows, rnd);
      used = add(w, pool, used, 10, true, rows, rnd);
      RoaringBitmap more = RoaringBitmap.bitmapOf(36, used - 1);
      w.delete(more.toArray());
      deleted.or(more);
      check(dir, pool, used, rows, deleted, rnd, why + " after compaction, adds and deletes");
    }
  }

  private static int add(IndexWriter w, CodeBlock pool, int used, int n, boolean documented, Map<Integer, Map<String, String>> rows,
      SplittableRandom rnd) {
    List<Map<String, String>> batch = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      int id = used + i;
      Map<String, String> row = new HashMap<>();
      if (documented) {
        row.put("key", "k" + id);
        if (rnd.nextInt(5) != 0) row.put("label", new String[] {"a", "b", "c"}[rnd.nextInt(3)]);
        if (rnd.nextInt(5) != 0) row.put("rpm", Integer.toString(rnd.nextInt(11)));
        batch.add(row);
      } else {
        row.put("key", "row-" + id);
      }
      rows.put(id, row);
    }
    assertEquals(used, w.add(pool.slice(used, used + n), documented ? batch : null));
    return used + n;
  }

  private static void check(Path dir, CodeBlock pool, int used, Map<Integer, Map<String, String>> rows, RoaringBitmap deleted,
      SplittableRandom rnd, String why) {
    CodeBlock all = pool.slice(0, used);
    try (IndexReader r = IndexReader.open(dir)) {
      for (Case c : CASES) {
        RoaringBitmap want = new RoaringBitmap();
        for (int id = 0; id < used; id++) if (!deleted.contains(id) && c.want.test(rows.get(id))) want.add(id);
        String what = why + " where " + c.expr;
        IdSet filter = Where.select(r.meta(), c.expr);
        assertEquals(r.maxId(), filter.size(), what);
        assertArrayEquals(want.toArray(), filter.toArray(), what);
        for (int qi = 0; qi < 3; qi++) {
          long[] q = AdversarialCodes.query(all, rnd);
          for (int k : new int[] {1, 7, used + 1})
            assertEquals(PopcountReference.knn(all, q, k, want::contains, null), r.search(q, k, filter, null), what + " k=" + k);
        }
      }
    }
  }
}
