package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThatThrownBy;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import java.util.ArrayDeque;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.TreeMap;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * {@link Dupes} through a real index (several segments, deletes, filters, layers) against an
 * O(n^2) join and a breadth-first search over its pairs, both written here bit by bit.
 */
class DupesTest {
  @TempDir Path tmp;

  /** Codes with planted exact and near copies (0-5 bits away) and one crowd of identical codes. */
  static CodeBlock planted(CodeBlock base, SplittableRandom rnd) {
    int n = base.size(), w = base.wordsPerCode(), bits = base.layout().bits();
    long[] words = base.words().clone();
    int crowd = rnd.nextInt(n);
    for (int i = 0; i < n / 8; i++) {
      int to = rnd.nextInt(n), from = rnd.nextInt(5) == 0 ? crowd : rnd.nextInt(n);
      System.arraycopy(words, from * w, words, to * w, w);
      int flips = rnd.nextInt(3) == 0 ? 0 : rnd.nextInt(6);
      for (int f = 0; f < flips; f++) {
        int b = rnd.nextInt(bits);
        words[to * w + (b >>> 6)] ^= 1L << (b & 63);
      }
    }
    return new CodeBlock(base.layout(), n, words);
  }

  /** Distance between codes i and j of {@code c} on the bits of {@code on} (null = all), bit by bit. */
  static int distance(CodeBlock c, int i, int j, boolean[] on) {
    int d = 0;
    for (int b = 0; b < c.layout().bits(); b++) if ((on == null || on[b]) && c.bit(i, b) != c.bit(j, b)) d++;
    return d;
  }

  record Pair(int a, int b, int d) {}

  @Test
  @Tag("slow")
  void pairsAndGroupsEqualBruteForceWithFiltersLayersDeletesAndSegments() {
    for (int rep = 0; rep < 6; rep++) {
      long seed = Randoms.seed(rep);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = 500 + rnd.nextInt(700);
      CodeBlock codes = planted(rep % 2 == 0
          ? Layers.relabel(SyntheticCodes.uniform(n, 96, seed), CodeLayout.parse("h1:64,h2:32"))
          : SyntheticCodes.reluLike(n, 64, 32, seed).codes(), rnd);
      List<Map<String, String>> meta = TestIndexes.rows(0, n, rnd);
      Path dir = tmp.resolve("i" + rep);
      TestIndexes.write(dir, codes, meta, 1 + rnd.nextInt(4));
      RoaringBitmap deleted = new RoaringBitmap();
      for (int i = 0; i < n / 10; i++) deleted.add(rnd.nextInt(n));
      try (IndexWriter w = IndexWriter.open(dir)) {
        w.delete(deleted.toArray());
      }
      try (IndexReader r = IndexReader.open(dir)) {
        for (int radius : new int[] {0, 1, 2, 3, 5, 8, 13}) {
          String where = switch (rnd.nextInt(3)) {
            case 0 -> null;
            case 1 -> "split = train";
            default -> "score >= 3";
          };
          List<String> layers = rnd.nextBoolean() ? null : List.of("h1");
          boolean[] on = null;
          if (layers != null) {
            on = new boolean[96];
            Arrays.fill(on, 0, 64, true);
          }
          List<Integer> ids = new ArrayList<>();
          for (int i = 0; i < n; i++) {
            if (deleted.contains(i)) continue;
            Map<String, String> m = meta.get(i);
            if (where == null || (where.startsWith("split") ? "train".equals(m.get("split")) : Integer.parseInt(m.get("score")) >= 3))
              ids.add(i);
          }
          List<Pair> want = new ArrayList<>();
          for (int x = 0; x < ids.size(); x++)
            for (int y = x + 1; y < ids.size(); y++) {
              int d = distance(codes, ids.get(x), ids.get(y), on);
              if (d <= radius) want.add(new Pair(ids.get(x), ids.get(y), d));
            }
          List<Pair> got = new ArrayList<>();
          String at = why + " R=" + radius + " where=" + where + " layers=" + layers;
          Dupes.Result res = Dupes.run(r, new Dupes.Params(radius, where, layers, false, false, Integer.MAX_VALUE, 1 + rnd.nextInt(3)),
              (a, b, d) -> got.add(new Pair(a, b, d)), null);
          got.sort(java.util.Comparator.comparingInt(Pair::a).thenComparingInt(Pair::b));
          assertEquals(want, got, at);
          assertEquals(want.size(), res.summary().pairs(), at);
          assertEquals(ids.size(), res.summary().examples(), at);
          checkGroups(res, ids, want, meta, at);
        }
      }
    }
  }

  /** Components by breadth-first search over the brute-force pairs, compared group by group. */
  static void checkGroups(Dupes.Result res, List<Integer> ids, List<Pair> pairs, List<Map<String, String>> meta, String at) {
    Map<Integer, List<int[]>> adj = new HashMap<>();
    for (Pair p : pairs) {
      adj.computeIfAbsent(p.a(), k -> new ArrayList<>()).add(new int[] {p.b(), p.d()});
      adj.computeIfAbsent(p.b(), k -> new ArrayList<>()).add(new int[] {p.a(), p.d()});
    }
    Map<Integer, Boolean> seen = new HashMap<>();
    List<String> want = new ArrayList<>();
    int cross = 0, conflict = 0;
    for (int id : ids) {
      if (seen.containsKey(id) || !adj.containsKey(id)) continue;
      List<Integer> comp = new ArrayList<>();
      int maxD = 0;
      ArrayDeque<Integer> queue = new ArrayDeque<>(List.of(id));
      seen.put(id, true);
      while (!queue.isEmpty()) {
        int x = queue.poll();
        comp.add(x);
        for (int[] e : adj.get(x)) {
          maxD = Math.max(maxD, e[1]);
          if (seen.putIfAbsent(e[0], true) == null) queue.add(e[0]);
        }
      }
      comp.sort(null);
      TreeMap<String, Integer> labels = new TreeMap<>(), splits = new TreeMap<>();
      for (int x : comp) {
        if (meta.get(x).get("label") != null) labels.merge(meta.get(x).get("label"), 1, Integer::sum);
        splits.merge(meta.get(x).get("split"), 1, Integer::sum);
      }
      if (splits.size() > 1) cross++;
      if (labels.size() > 1) conflict++;
      want.add(comp.size() + " " + comp.subList(0, Math.min(Dupes.SHOWN, comp.size())) + " d" + maxD + " " + labels + " " + splits);
    }
    List<String> got = new ArrayList<>();
    for (Dupes.Group g : res.groups()) {
      List<Integer> members = new ArrayList<>();
      for (Dupes.Member m : g.members()) members.add(m.id());
      got.add(g.size() + " " + members + " d" + g.maxDistance() + " " + new TreeMap<>(g.labels()) + " " + new TreeMap<>(g.splits()));
      assertEquals(g.crossSplit(), g.splits().size() > 1, at);
      assertEquals(g.conflictingLabels(), g.labels().size() > 1, at);
    }
    want.sort(null);
    got.sort(null);
    assertEquals(want, got, at);
    assertEquals(want.size(), res.summary().groups(), at);
    assertEquals(cross, res.summary().crossSplitGroups(), at);
    assertEquals(conflict, res.summary().conflictingGroups(), at);
  }

  /**
   * A hand-made set with a known answer (8-bit codes, radius 2): ids 0,1 identical, train/test, both
   * cat (leak); ids 2,3 one bit apart, both train, cat/dog (conflict); id 4 alone; ids 5,6,7 a chain
   * 2 bits per step (5-7 is 4 apart), train/train/test, owl/owl/no label (leak, largest distance 2).
   */
  @Test
  void handMadeLeakageAndConflicts() {
    int[] bytes = {0b0000_0001, 0b0000_0001, 0b1111_0000, 0b1111_0001, 0b0101_0101, 0b0000_1110, 0b0011_1110, 0b1111_1110};
    String[][] rows = {{"cat", "train"}, {"cat", "test"}, {"cat", "train"}, {"dog", "train"}, {"cat", "train"},
        {"owl", "train"}, {"owl", "train"}, {null, "test"}};
    long[] words = new long[bytes.length];
    for (int i = 0; i < bytes.length; i++) words[i] = bytes[i];
    List<Map<String, String>> meta = new ArrayList<>();
    for (int i = 0; i < rows.length; i++) {
      Map<String, String> m = new HashMap<>(Map.of("key", "e" + i, "split", rows[i][1]));
      if (rows[i][0] != null) m.put("label", rows[i][0]);
      meta.add(m);
    }
    Path dir = tmp.resolve("hand");
    TestIndexes.write(dir, new CodeBlock(CodeLayout.single("act", 8), 8, words), meta, 2);
    try (IndexReader r = IndexReader.open(dir)) {
      List<Pair> pairs = new ArrayList<>();
      Dupes.Result res = Dupes.run(r, new Dupes.Params(2, null, null, false, false, 10, 2), (a, b, d) -> pairs.add(new Pair(a, b, d)), null);
      assertEquals(List.of(new Pair(0, 1, 0), new Pair(2, 3, 1), new Pair(5, 6, 2), new Pair(6, 7, 2)), pairs);
      Dupes.Summary s = res.summary();
      assertEquals(4, s.pairs());
      assertEquals(1, s.exactDuplicatePairs());
      assertEquals(2, s.duplicatedExamples());
      assertEquals(3, s.groups());
      assertEquals(3, s.largestGroup());
      assertEquals(7, s.examplesInGroups());
      assertEquals(2, s.crossSplitGroups());
      assertEquals(1, s.conflictingGroups());
      assertEquals(List.of("3 d2 leak=true conflict=false [e5, e6, e7]", "2 d0 leak=true conflict=false [e0, e1]",
          "2 d1 leak=false conflict=true [e2, e3]"), describe(res.groups()));
      Dupes.Result leaks = Dupes.run(r, new Dupes.Params(2, null, null, true, false, 10, 1), null, null);
      assertEquals(List.of("3 d2 leak=true conflict=false [e5, e6, e7]", "2 d0 leak=true conflict=false [e0, e1]"), describe(leaks.groups()));
      assertEquals(2, leaks.summary().flaggedPairs()); // 0-1 and 6-7, counted without a pair sink
      assertEquals(0, leaks.summary().pairsWritten());
      assertEquals(-1, s.flaggedPairs());
      List<Pair> crossPairs = new ArrayList<>();
      Dupes.run(r, new Dupes.Params(2, null, null, true, false, 10, 1), (a, b, d) -> crossPairs.add(new Pair(a, b, d)), null);
      assertEquals(List.of(new Pair(0, 1, 0), new Pair(6, 7, 2)), crossPairs);
      List<Pair> conflictPairs = new ArrayList<>();
      Dupes.Result conflicts = Dupes.run(r, new Dupes.Params(2, null, null, false, true, 10, 1),
          (a, b, d) -> conflictPairs.add(new Pair(a, b, d)), null);
      assertEquals(List.of("2 d1 leak=false conflict=true [e2, e3]"), describe(conflicts.groups()));
      assertEquals(List.of(new Pair(2, 3, 1)), conflictPairs);
      assertEquals(1, conflicts.summary().flaggedPairs());
      assertEquals(1, conflicts.summary().pairsWritten());
      // radius 4 joins 5 and 7 directly: the largest distance found becomes 4
      Dupes.Result wider = Dupes.run(r, new Dupes.Params(4, null, null, false, false, 1, 1), null, null);
      assertEquals(4, wider.groups().get(0).maxDistance());
    }
  }

  static List<String> describe(List<Dupes.Group> groups) {
    List<String> out = new ArrayList<>();
    for (Dupes.Group g : groups) {
      List<String> keys = new ArrayList<>();
      for (Dupes.Member m : g.members()) keys.add(m.key());
      out.add(g.size() + " d" + g.maxDistance() + " leak=" + g.crossSplit() + " conflict=" + g.conflictingLabels() + " " + keys);
    }
    return out;
  }

  @Test
  void againstEqualsPerRowRadiusSearch() {
    for (int rep = 0; rep < 4; rep++) {
      long seed = Randoms.seed(50 + rep);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = 400;
      CodeBlock codes = planted(SyntheticCodes.reluLike(n + 100, 40, 24, seed).codes(), rnd);
      Path dir = tmp.resolve("a" + rep);
      TestIndexes.write(dir, codes.slice(0, n), TestIndexes.rows(0, n, rnd), 3);
      CodeBlock queries = codes.slice(n, n + 100);
      try (IndexReader r = IndexReader.open(dir)) {
        for (int radius : new int[] {0, 2, 4, 9}) {
          List<Pair> want = new ArrayList<>(), got = new ArrayList<>();
          for (int q = 0; q < 100; q++)
            for (int id = 0; id < n; id++) {
              int d = 0;
              for (int b = 0; b < 64; b++) if (queries.bit(q, b) != codes.bit(id, b)) d++;
              if (d <= radius) want.add(new Pair(q, id, d));
            }
          Dupes.AgainstResult res = Dupes.against(r, new Dupes.Params(radius, null, null, false, false, 10, 2),
              new QueryCodes(queries, 0), (q, id, d) -> got.add(new Pair(q, id, d)), null);
          assertEquals(want, got, why + " R=" + radius);
          assertEquals(want.size(), res.summary().matches());
          long rowsWith = want.stream().mapToInt(Pair::a).distinct().count();
          assertEquals(rowsWith, res.summary().rowsWithMatches());
          assertEquals(100 - rowsWith, res.summary().rowsWithout());
        }
      }
    }
  }

  /** 10,000 identical codes: C(10000, 2) = 49,995,000 pairs counted as they stream, none kept. */
  @Test
  void tenThousandIdenticalCodesThroughTheStreamingApi() {
    int n = 10_000;
    long[] words = new long[n * 2];
    for (int i = 0; i < n; i++) words[2 * i] = 0xF0F0L;
    Path dir = tmp.resolve("crowd");
    TestIndexes.write(dir, new CodeBlock(CodeLayout.single("act", 100), n, words), null, 2);
    try (IndexReader r = IndexReader.open(dir)) {
      long[] count = {0};
      Dupes.Result res = Dupes.run(r, new Dupes.Params(2, null, null, false, false, 1, 2), (a, b, d) -> count[0]++, null);
      assertEquals(49_995_000L, count[0]);
      assertEquals(49_995_000L, res.summary().pairs());
      assertEquals(49_995_000L, res.summary().exactDuplicatePairs());
      assertEquals(1, res.summary().groups());
      assertEquals(n, res.groups().get(0).size());
    }
  }

  /** A filter that selects no live example is a question with an empty answer, as an index with no live example is. */
  @Test
  void aFilterThatSelectsNothingJoinsToNothing() {
    CodeBlock codes = SyntheticCodes.reluLike(60, 10, 6, 3).codes();
    Path dir = tmp.resolve("none");
    TestIndexes.write(dir, codes, TestIndexes.rows(0, 60, new SplittableRandom(3)), 1);
    try (IndexReader r = IndexReader.open(dir)) {
      Dupes.Params p = new Dupes.Params(16, "score > 100", null, false, false, 10, 1);
      List<Pair> pairs = new ArrayList<>();
      Dupes.Result joined = Dupes.run(r, p, (a, b, d) -> pairs.add(new Pair(a, b, d)), null);
      assertEquals(0, joined.summary().examples());
      assertEquals(0, joined.summary().pairs());
      assertEquals(List.of(), joined.groups());
      Dupes.AgainstResult against = Dupes.against(r, p, new QueryCodes(codes.slice(0, 5), 0), (a, b, d) -> pairs.add(new Pair(a, b, d)), null);
      assertEquals(0, against.summary().examples());
      assertEquals(5, against.summary().rowsWithout());
      assertEquals(List.of(), against.rows());
      assertEquals(List.of(), pairs);
    }
  }

  @Test
  void badInputIsRefused() {
    CodeBlock codes = SyntheticCodes.reluLike(60, 10, 6, 3).codes();
    Path dir = tmp.resolve("bad");
    TestIndexes.write(dir, codes, TestIndexes.rows(0, 60, new SplittableRandom(3)), 1);
    try (IndexReader r = IndexReader.open(dir)) {
      assertThatThrownBy(() -> new Dupes.Params(-1, null, null, false, false, 10, 1))
          .isInstanceOf(BadInputException.class).hasMessage("radius must be at least 0, got -1");
      assertThatThrownBy(() -> Dupes.run(r, new Dupes.Params(17, null, null, false, false, 10, 1), null, null))
          .isInstanceOf(BadInputException.class).hasMessageContaining("larger than the code length, 16 bits");
      assertThatThrownBy(() -> Dupes.run(r, new Dupes.Params(7, null, List.of("h2"), false, false, 10, 1), null, null))
          .isInstanceOf(BadInputException.class).hasMessageContaining("6 bits");
      QueryCodes wrong = new QueryCodes(Layers.relabel(codes.slice(0, 2), CodeLayout.parse("a:10,b:6")), 0);
      assertThatThrownBy(() -> Dupes.against(r, new Dupes.Params(1, null, null, false, false, 10, 1), wrong, null, null))
          .isInstanceOf(BadInputException.class).hasMessageContaining("a:10,b:6");
    }
  }
}
