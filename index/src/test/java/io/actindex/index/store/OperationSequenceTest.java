package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.AdversarialCodes;
import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.core.LayerMasks;
import io.actindex.core.PopcountReference;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.meta.Where;
import io.actindex.index.mih.SearchPlanOptions;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.BitSet;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.TreeSet;
import java.util.function.Predicate;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Random sequences of the operations users run on an index folder, each mirrored in a plain model
 * (every row ever added: id, key, code, label, split; and which ids are deleted): adds of 0 to 140
 * codes (ReLU-like or uniform, fresh or copies of earlier codes, deleted ones included) with
 * metadata rows (own keys, no key, a deleted row's key again, missing label or split) or without
 * (bare ids), an add refused for a key that is taken, deletes by ids, by keys and by a
 * where-expression (resolved through a reader as {@code actindex delete} does), compaction, the
 * merges a small merge policy asks for, the writer closed and opened again under another search
 * plan, the reader opened again or kept (it must go on answering for the generation it opened).
 * Between the operations: k-NN (k of 1, a few, the number of candidates, more than that) and radius
 * queries with where-filters on label, split and key, sets of ids (deleted ones and all included),
 * layer masks and other masks, each answer equal to {@link PopcountReference} (an independent
 * {@code Long.bitCount} loop; Hamming 1950) over the model's live, accepted rows in id order, so
 * ties come out by ascending id; filters, key look-ups, codes and rows equal the model too.
 *
 * <p>Seeds: the fixed ones below on every run, and one fresh seed per run ({@link Randoms}); a
 * failure names its seed (a fixed seed repeats as is; a fresh one with {@code -Dtests.seed}) and the
 * last operations. The slow test runs longer sequences, and two with batches 40 times larger and a
 * cap of 4,096-8,191 codes, so that the default plan builds partitions too.
 */
class OperationSequenceTest {
  @TempDir Path tmp;

  /** Run on every run; a fresh seed that fails goes here once the bug is fixed. */
  private static final long[] FIXED_SEEDS = {0x5eed1L, 0x5eed2L, 0x5eed3L, 0x5eed4L};

  private static final String[] LABELS = {"a", "b", "c"}, SPLITS = {"train", "test"};

  /** Ways the search is covered, counted over a test's runs so that no path of the sequence is dead. */
  private int merges, compactionsWithDeletes, staleQueries, refusedAdds, tableSegments, partitionSegments;

  @Test
  void randomOperationSequencesStayExact() {
    for (long seed : FIXED_SEEDS) run(seed, "fixed seed=" + Long.toHexString(seed), 40, 1);
    long fresh = Randoms.seed(0);
    run(fresh, Randoms.describe(fresh), 40, 1);
    assertTrue(merges > 0 && compactionsWithDeletes > 0 && staleQueries > 0 && refusedAdds > 0 && tableSegments > 0
        && partitionSegments > 0, "merges " + merges + ", compactions with deletes " + compactionsWithDeletes
        + ", queries on a kept reader " + staleQueries + ", refused adds " + refusedAdds + ", segments seen with tables "
        + tableSegments + ", with a partition " + partitionSegments);
  }

  @Test
  @Tag("slow")
  void longerSequencesManySeeds() {
    for (int rep = 1; rep <= 12; rep++) {
      long seed = Randoms.seed(rep);
      run(seed, Randoms.describe(seed), 200, 1);
    }
    for (int rep = 13; rep <= 14; rep++) { // segments of thousands: partitions under the default plan too
      long seed = Randoms.seed(rep);
      run(seed, Randoms.describe(seed) + " scale=40", 40, 40);
    }
  }

  /** One row of the model; {@code documented} false for an add without metadata (its key is "row-ID"). */
  private record Row(int id, String key, long[] code, String label, String split, boolean documented) {
    Map<String, String> asMap() {
      Map<String, String> m = new HashMap<>();
      m.put("key", key);
      if (label != null) m.put("label", label);
      if (split != null) m.put("split", split);
      return m;
    }
  }

  /** What a reader opened at some moment must show: the first {@code maxId} rows, minus {@code dead}. */
  private record Snapshot(int maxId, BitSet dead) {
    boolean live(int id) {
      return id < maxId && !dead.get(id);
    }
  }

  /** A where-expression and its meaning on a row (missing values match only the negated comparisons, docs/where.md). */
  private record Expr(String text, Predicate<Map<String, String>> test) {}

  /** One seeded run: the index, its model and the generator of codes. */
  private final class Run {
    final SplittableRandom rnd;
    final String why;
    final CodeLayout layout;
    final SyntheticCodes.ReluNet net; // null: codes of AdversarialCodes' families
    final Path dir;
    final List<Row> rows = new ArrayList<>();
    final BitSet dead = new BitSet();
    final Map<String, Integer> liveKeys = new HashMap<>();
    final List<String> log = new ArrayList<>();
    MergePolicy policy;
    IndexWriter writer;
    IndexReader reader;
    Snapshot readerSees;
    int keyCounter;
    final int scale;
    /** The largest segment cap of this run's writers: a segment written under a larger cap keeps its size. */
    int maxCap;

    Run(long seed, String why, Path dir, int scale) {
      this.scale = scale;
      rnd = new SplittableRandom(seed);
      this.dir = dir;
      if (rnd.nextBoolean()) {
        int[][] shapes = {{40, 25}, {128, 128}, {150, 107}, {200, 117}, {256, 264}};
        int[] s = shapes[rnd.nextInt(shapes.length)];
        net = new SyntheticCodes.ReluNet(16, s[0], s[1], 6, rnd.nextLong());
        CodeBlock probe = net.sample(1, 0, 1).codes();
        layout = rnd.nextBoolean() ? probe.layout() : LayerMasks.cut(probe, rnd).layout();
      } else {
        net = null;
        int[] widths = {64, 65, 129, 300, 513, 1000};
        layout = AdversarialCodes.layout(widths[rnd.nextInt(widths.length)], rnd);
      }
      this.why = why + " layout=" + layout;
    }

    String where() {
      int from = Math.max(0, log.size() - 12);
      return why + " after ops " + from + ".." + (log.size() - 1) + ": " + String.join("; ", log.subList(from, log.size()));
    }

    void openWriter() {
      int w = layout.words(), cap = scale == 1 ? 8 + rnd.nextInt(50) : 4096 + rnd.nextInt(4096);
      policy = new MergePolicy(256 + cap * (8L * w + 4), 2 + rnd.nextInt(3), (1 + rnd.nextInt(16)) * scale,
          new double[] {0, 0.25, 1}[rnd.nextInt(3)]); // deleted share: rewrite on any delete, the default, never
      assertEquals(cap, policy.maxCodes(w), why);
      maxCap = Math.max(maxCap, cap);
      // segments of test size get a partition (so a share in the joint search) only under PARTITION
      SearchPlanOptions plan = switch (rnd.nextInt(6)) {
        case 0, 1 -> SearchPlanOptions.defaults().withStrategy(SearchPlanOptions.Strategy.PARTITION);
        case 2 -> SearchPlanOptions.defaults().withStrategy(SearchPlanOptions.Strategy.TABLES);
        case 3 -> SearchPlanOptions.defaults().withStrategy(SearchPlanOptions.Strategy.SCAN);
        default -> SearchPlanOptions.defaults();
      };
      writer = (writer == null ? IndexWriter.create(dir, layout, Map.of()) : IndexWriter.open(dir)).mergePolicy(policy).searchPlan(plan);
      log.add("writer cap=" + cap + " factor=" + policy.mergeFactor() + " floor=" + policy.floorCodes() + " share=" + policy.maxDeletedShare() + " plan=" + plan.strategy());
    }

    Snapshot now() {
      return new Snapshot(rows.size(), (BitSet) dead.clone());
    }

    void openReader() {
      if (reader != null) reader.close();
      log.add("reopen reader");
      reader = IndexReader.open(dir);
      readerSees = now();
      checkState(reader, readerSees);
    }

    // ---- operations ----

    CodeBlock codes(int n) {
      CodeBlock fresh = net != null
          ? new CodeBlock(layout, n, net.sample(n, rnd.nextInt(4) == 0 ? 1 : 0, rnd.nextLong()).codes().words())
          : AdversarialCodes.codes(new String[] {"uniform", "fewDistinct", "oneCluster", "halfConstant", "sparse"}[rnd.nextInt(5)],
              layout, n, rnd);
      long[] words = fresh.words();
      int w = layout.words();
      if (!rows.isEmpty() && rnd.nextInt(3) == 0) // copies of earlier codes, deleted ones included: ties across segments
        for (int i = 0; i < n; i++)
          if (rnd.nextInt(3) == 0) System.arraycopy(rows.get(rnd.nextInt(rows.size())).code(), 0, words, i * w, w);
      return new CodeBlock(layout, n, words);
    }

    String freshKey() {
      String k = "k" + keyCounter++;
      return rnd.nextInt(5) == 0 ? k + " x" : k; // some keys hold a space (quoted in expressions)
    }

    void add() {
      int r = rnd.nextInt(20);
      int n = (r == 0 ? 0 : r < 7 ? 1 + rnd.nextInt(4) : r < 17 ? 5 + rnd.nextInt(30) : 40 + rnd.nextInt(80)) * scale;
      CodeBlock batch = codes(n);
      int first = rows.size();
      boolean bare = rnd.nextInt(3) == 0;
      List<Map<String, String>> meta = bare ? null : new ArrayList<>();
      List<Row> added = new ArrayList<>();
      TreeSet<String> dropped = new TreeSet<>();
      for (Row row : rows) if (dead.get(row.id()) && row.key().startsWith("k") && !liveKeys.containsKey(row.key())) dropped.add(row.key());
      List<String> reusable = new ArrayList<>(dropped);
      for (int i = 0; i < n; i++) {
        int id = first + i;
        if (bare) {
          added.add(new Row(id, "row-" + id, batch.code(i), null, null, false));
          continue;
        }
        Map<String, String> m = new LinkedHashMap<>();
        int kr = rnd.nextInt(10);
        String key;
        if (kr < 2) key = "row-" + id; // no key column: the store synthesizes it
        else if (kr < 3 && !reusable.isEmpty()) m.put("key", key = reusable.remove(rnd.nextInt(reusable.size())));
        else m.put("key", key = freshKey());
        String label = rnd.nextInt(5) == 0 ? null : LABELS[rnd.nextInt(LABELS.length)];
        String split = rnd.nextInt(4) == 0 ? null : SPLITS[rnd.nextInt(SPLITS.length)];
        if (label != null) m.put("label", label);
        if (split != null) m.put("split", split);
        meta.add(m);
        added.add(new Row(id, key, batch.code(i), label, split, true));
      }
      int before = writer.segmentCount(), pieces = policy.split(n, layout.words()).size();
      log.add("add " + n + (bare ? " bare" : "") + " at " + first);
      assertEquals(first, writer.add(batch, meta), where());
      assertEquals(List.of(), writer.takeWarnings(), where());
      if (writer.segmentCount() < before + pieces) merges++;
      for (Row row : added) {
        rows.add(row);
        liveKeys.put(row.key(), row.id());
      }
    }

    /** An add whose last row takes the key of a live row: refused, nothing changes, the writer stays usable. */
    void refusedAdd() {
      List<String> taken = new ArrayList<>(liveKeys.keySet());
      if (taken.isEmpty()) return;
      taken.sort(null);
      String key = taken.get(rnd.nextInt(taken.size()));
      int n = 1 + rnd.nextInt(3);
      List<Map<String, String>> meta = new ArrayList<>();
      for (int i = 0; i < n; i++) meta.add(new LinkedHashMap<>(Map.of("key", i == n - 1 ? key : freshKey(), "label", "a")));
      log.add("refused add of key " + key);
      int segments = writer.segmentCount();
      CodeBlock batch = codes(n);
      assertThrows(BadInputException.class, () -> writer.add(batch, meta), where());
      assertEquals(rows.size(), writer.maxId(), where());
      assertEquals(segments, writer.segmentCount(), where());
      refusedAdds++;
    }

    void deleteIds() {
      int m = rnd.nextInt(9);
      int[] ids = new int[m];
      for (int i = 0; i < m; i++) ids[i] = rnd.nextInt(rows.size() + 3); // ids not given out are ignored
      if (rows.size() > 10 && rnd.nextInt(3) == 0) { // a run of ids: may empty a whole segment
        int from = rnd.nextInt(rows.size()), len = (1 + rnd.nextInt(30)) * scale;
        ids = new int[Math.min(len, rows.size() - from)];
        for (int i = 0; i < ids.length; i++) ids[i] = from + i;
      }
      log.add("delete ids " + (ids.length > 10 ? ids[0] + ".." + ids[ids.length - 1] : Arrays.toString(ids)));
      delete(ids);
    }

    void deleteKeys() {
      List<String> keys = new ArrayList<>();
      List<String> live = new ArrayList<>(liveKeys.keySet());
      live.sort(null);
      for (int i = rnd.nextInt(5); i > 0 && !live.isEmpty(); i--) keys.add(live.get(rnd.nextInt(live.size())));
      if (!rows.isEmpty() && rnd.nextBoolean()) keys.add(rows.get(rnd.nextInt(rows.size())).key()); // perhaps deleted
      keys.add("never-" + rnd.nextInt(1000));
      log.add("delete keys " + keys);
      List<Integer> ids = new ArrayList<>();
      try (IndexReader r = IndexReader.open(dir)) {
        for (String k : keys) {
          int id = r.meta().idOfKey(k);
          assertEquals(liveKeys.getOrDefault(k, -1), id, where() + " idOfKey " + k);
          if (id >= 0) ids.add(id);
        }
      }
      delete(ids.stream().mapToInt(Integer::intValue).toArray());
    }

    void deleteWhere() {
      Expr e = expr(1);
      log.add("delete where " + e.text());
      int[] ids;
      try (IndexReader r = IndexReader.open(dir)) {
        ids = Where.select(r.meta(), e.text()).toArray();
        assertArrayEquals(matching(now(), e), ids, where());
      }
      delete(ids);
    }

    void delete(int[] ids) {
      BitSet fresh = new BitSet();
      for (int id : ids) if (id < rows.size() && !dead.get(id)) fresh.set(id);
      assertEquals(fresh.cardinality(), writer.delete(ids), where());
      for (int id = fresh.nextSetBit(0); id >= 0; id = fresh.nextSetBit(id + 1)) {
        dead.set(id);
        liveKeys.remove(rows.get(id).key());
      }
    }

    void compact() {
      log.add("compact");
      if (!dead.isEmpty()) compactionsWithDeletes++;
      writer.compact();
      assertEquals(List.of(), writer.takeWarnings(), where());
    }

    void reopenWriter() {
      writer.close();
      openWriter();
    }

    /** A reader opened now, checked and closed (what each query command does). */
    void freshReader() {
      log.add("fresh reader");
      try (IndexReader r = IndexReader.open(dir)) {
        Snapshot s = now();
        checkState(r, s);
        queries(r, s, 2);
      }
    }

    // ---- checks ----

    /** Codes, rows, key look-ups and counts of the reader against the model at the moment it opened. */
    void checkState(IndexReader r, Snapshot s) {
      assertEquals(s.maxId(), r.maxId(), where());
      List<Integer> live = new ArrayList<>();
      for (int id = 0; id < s.maxId(); id++) if (s.live(id)) live.add(id);
      assertEquals(live.size(), r.liveCount(), where());
      assertArrayEquals(live.stream().mapToInt(Integer::intValue).toArray(), r.liveIds().toArray(), where());
      assertEquals(live.stream().filter(id -> rows.get(id).documented()).count(), r.meta().documents(), where() + " documents");
      for (IndexInfo.SegmentInfo seg : r.info().segments()) {
        if (seg.substrings() > 0) tableSegments++;
        if (seg.searcher().onDemandBytes() > 0) partitionSegments++;
      }
      for (IndexInfo.SegmentInfo seg : r.info().segments())
        assertTrue(seg.count() <= maxCap, where() + ": segment of " + seg.count());
      for (int i = 0; i < 8 && s.maxId() > 0; i++) {
        Row row = rows.get(rnd.nextInt(s.maxId()));
        assertEquals(s.live(row.id()), r.isLive(row.id()), where() + " id " + row.id());
        if (!s.live(row.id())) {
          assertEquals(null, r.meta().document(row.id()), where() + " row of deleted id " + row.id());
          continue;
        }
        assertArrayEquals(row.code(), r.code(row.id()), where() + " code of " + row.id());
        assertEquals(row.asMap(), r.meta().document(row.id()), where() + " row of " + row.id());
        assertEquals(row.id(), r.meta().idOfKey(row.key()), where() + " key " + row.key());
      }
    }

    /** A few queries of every kind through {@code r}, against the model at the moment {@code r} opened. */
    void queries(IndexReader r, Snapshot s, int count) {
      if (s.maxId() != rows.size() || !s.dead().equals(dead)) staleQueries++;
      int bits = layout.bits(), w = layout.words();
      for (int qi = 0; qi < count; qi++) {
        long[] q = query(s);
        String filterKind;
        IdSet filter;
        Predicate<Row> accept;
        switch (rnd.nextInt(6)) {
          case 0, 1 -> {
            filterKind = "none";
            filter = null;
            accept = row -> true;
          }
          case 2, 3 -> {
            Expr e = expr(2);
            filterKind = "where " + e.text();
            filter = Where.select(r.meta(), e.text());
            assertArrayEquals(matching(s, e), filter.toArray(), where() + " " + filterKind);
            accept = row -> e.test().test(row.asMap());
          }
          default -> {
            BitSet set = new BitSet();
            int kind = rnd.nextInt(4);
            if (kind == 0 && s.maxId() > 0) set.set(rnd.nextInt(s.maxId()));
            else if (kind == 1) set.set(0, s.maxId());
            else if (kind == 2) set.or(s.dead()); // tombstoned ids only: nothing may come back
            for (int id = 0; kind == 3 && id < s.maxId(); id++) if (rnd.nextInt(4) == 0) set.set(id);
            int[] ids = set.stream().toArray();
            boolean raw = rnd.nextBoolean(); // a set holding deleted ids, or one the reader made (live only)
            filterKind = (raw ? "raw " : "") + "ids kind " + kind + " (" + ids.length + ")";
            filter = raw ? IdSet.of(s.maxId(), ids) : r.filter(ids);
            accept = row -> set.get(row.id());
          }
        }
        long[] mask = switch (rnd.nextInt(5)) {
          case 0 -> layout.mask(rnd.ints(0, layout.segments().size()).limit(1 + rnd.nextInt(layout.segments().size())).distinct().toArray());
          case 1 -> LayerMasks.mask(layout, rnd);
          default -> null;
        };
        // the model's live, accepted rows in id order: ordinals of the reference are then ascending ids
        List<Row> cand = new ArrayList<>();
        for (int id = 0; id < s.maxId(); id++) if (s.live(id) && accept.test(rows.get(id))) cand.add(rows.get(id));
        long[] words = new long[cand.size() * w];
        for (int i = 0; i < cand.size(); i++) System.arraycopy(cand.get(i).code(), 0, words, i * w, w);
        CodeBlock block = new CodeBlock(layout, cand.size(), words);
        String what = where() + " query " + qi + " filter " + filterKind + (mask == null ? "" : " " + LayerMasks.describe(mask));
        int n = cand.size();
        int[] ks = {1, 2 + rnd.nextInt(9), Math.max(1, n), n + 1 + rnd.nextInt(3)};
        Hits wide = null;
        for (int k : ks) {
          Hits want = ids(PopcountReference.knn(block, q, k, null, mask), cand);
          assertEquals(want, r.search(q, k, filter, mask), what + " k=" + k + " of " + n);
          wide = want;
        }
        int radius = switch (rnd.nextInt(4)) {
          case 0 -> 0;
          case 1 -> rnd.nextInt(bits + 1);
          case 2 -> bits;
          default -> wide.size() == 0 ? 1 : wide.dist(rnd.nextInt(wide.size())); // a distance where ties sit
        };
        assertEquals(ids(PopcountReference.radius(block, q, radius, null, mask), cand), r.searchRadius(q, radius, filter, mask),
            what + " radius=" + radius);
      }
    }

    /** A live code, a few bits from one, a deleted one, one of the generator, or random; sometimes with ghost bits set. */
    long[] query(Snapshot s) {
      int bits = layout.bits(), w = layout.words();
      long[] q;
      int kind = s.maxId() == 0 ? 4 : rnd.nextInt(5);
      Row row = s.maxId() == 0 ? null : rows.get(rnd.nextInt(s.maxId()));
      q = switch (kind) {
        case 0, 2 -> row.code().clone(); // live or deleted: a deleted code must not come back at distance 0
        case 1 -> AdversarialCodes.flip(row.code().clone(), 1 + rnd.nextInt(5), bits, rnd);
        case 3 -> codes(1).code(0);
        default -> AdversarialCodes.random(bits, rnd);
      };
      if (rnd.nextInt(4) == 0) q[w - 1] |= rnd.nextLong() & CodeBlock.ghostMask(layout); // bits past the width never count
      return q;
    }

    /** Hits over the reference's ordinals as ids of {@code cand}. */
    Hits ids(Hits h, List<Row> cand) {
      int[] ids = new int[h.size()], dists = new int[h.size()];
      for (int i = 0; i < h.size(); i++) {
        ids[i] = cand.get(h.ord(i)).id();
        dists[i] = h.dist(i);
      }
      return new Hits(ids, dists);
    }

    int[] matching(Snapshot s, Expr e) {
      List<Integer> out = new ArrayList<>();
      for (int id = 0; id < s.maxId(); id++) if (s.live(id) && e.test().test(rows.get(id).asMap())) out.add(id);
      return out.stream().mapToInt(Integer::intValue).toArray();
    }

    // ---- where-expressions ----

    Expr expr(int depth) {
      if (depth == 0 || rnd.nextInt(5) < 2) return comparison();
      Expr a = expr(depth - 1), b = expr(depth - 1);
      return switch (rnd.nextInt(3)) {
        case 0 -> new Expr("(" + a.text() + ") and (" + b.text() + ")", row -> a.test().test(row) && b.test().test(row));
        case 1 -> new Expr("(" + a.text() + ") or (" + b.text() + ")", row -> a.test().test(row) || b.test().test(row));
        default -> new Expr("not (" + a.text() + ")", row -> !a.test().test(row));
      };
    }

    Expr comparison() {
      boolean onLabel = rnd.nextBoolean();
      String field = onLabel ? "label" : "split";
      String[] values = onLabel ? new String[] {"a", "b", "c", "z"} : new String[] {"train", "test", "val"};
      String v = values[rnd.nextInt(values.length)], v2 = values[rnd.nextInt(values.length)];
      return switch (rnd.nextInt(7)) {
        case 0 -> new Expr(field + " = " + v, row -> v.equals(row.get(field)));
        case 1 -> new Expr(field + " != " + v, row -> !v.equals(row.get(field)));
        case 2 -> new Expr(field + " in (" + v + ", " + v2 + ")", row -> v.equals(row.get(field)) || v2.equals(row.get(field)));
        case 3 -> new Expr(field + " not in (" + v + ")", row -> !v.equals(row.get(field)));
        default -> {
          List<String> keys = new ArrayList<>();
          for (int i = 1 + rnd.nextInt(3); i > 0; i--)
            keys.add(rows.isEmpty() || rnd.nextInt(6) == 0 ? "never-" + rnd.nextInt(9) : rows.get(rnd.nextInt(rows.size())).key());
          StringBuilder text = new StringBuilder("key in (");
          for (int i = 0; i < keys.size(); i++) text.append(i == 0 ? "" : ", ").append('\'').append(keys.get(i)).append('\'');
          yield new Expr(text.append(')').toString(), row -> keys.contains(row.get("key")));
        }
      };
    }
  }

  /** {@code steps} random operations; {@code scale} multiplies batch sizes, runs of deleted ids and the segment cap. */
  private void run(long seed, String why, int steps, int scale) {
    Run run = new Run(seed, why, tmp.resolve("idx-" + Long.toHexString(seed)), scale);
    run.openWriter();
    run.openReader();
    try {
      for (int step = 0; step < steps; step++) {
        int op = run.rnd.nextInt(100);
        if (op < 34 || run.rows.isEmpty()) run.add();
        else if (op < 38) run.refusedAdd();
        else if (op < 50) run.deleteIds();
        else if (op < 57) run.deleteKeys();
        else if (op < 62) run.deleteWhere();
        else if (op < 68) run.compact();
        else if (op < 72) run.reopenWriter();
        else if (op < 85) run.openReader();
        else run.freshReader();
        // the reader kept open answers for the generation it opened, whatever the writer did since
        run.queries(run.reader, run.readerSees, 1 + run.rnd.nextInt(2));
      }
      run.writer.compact();
      run.log.add("final compact");
      run.openReader();
      run.queries(run.reader, run.readerSees, 12);
    } finally {
      if (run.reader != null) run.reader.close();
      run.writer.close();
    }
  }
}
