package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThatThrownBy;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.BadInputException;
import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Hits;
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
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * Nearest through a real index (several segments, deletes, a later add) equals a brute-force
 * scan over all codes written in this test, with filters and layer choices.
 */
class NearestTest {
  @TempDir Path tmp;

  record Filter(String where, Predicate<Map<String, String>> test) {}

  static final List<Filter> FILTERS = List.of(
      new Filter(null, r -> true),
      new Filter("split = train", r -> "train".equals(r.get("split"))),
      new Filter("label in (cat, owl) and score >= 4", r -> ("cat".equals(r.get("label")) || "owl".equals(r.get("label")))
          && Integer.parseInt(r.get("score")) >= 4),
      new Filter("not (label = dog or score < 2)", r -> !("dog".equals(r.get("label")) || Integer.parseInt(r.get("score")) < 2)));

  @Test
  void equalsBruteForceWithFiltersLayersDeletesAndAdds() {
    for (int rep = 0; rep < 4; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      String why = Randoms.describe(seed);
      CodeBlock all = rep % 2 == 0
          ? SyntheticCodes.reluLike(500, 20 + rnd.nextInt(60), 10 + rnd.nextInt(40), seed).codes()
          : Layers.relabel(SyntheticCodes.uniform(500, 90, seed), CodeLayout.parse("h1:60,h2:30"));
      List<Map<String, String>> meta = TestIndexes.rows(0, 500, rnd);
      Path dir = tmp.resolve("i" + rep);
      TestIndexes.write(dir, all.slice(0, 400), meta.subList(0, 400), 3);
      RoaringBitmap deleted = new RoaringBitmap();
      for (int i = 0; i < 40; i++) deleted.add(rnd.nextInt(400));
      try (IndexWriter w = IndexWriter.open(dir)) {
        w.delete(deleted.toArray());
      }
      check(dir, all, 400, meta, deleted, rnd, why);
      try (IndexWriter w = IndexWriter.open(dir)) {
        w.add(all.slice(400, 500), meta.subList(400, 500));
      }
      check(dir, all, 500, meta, deleted, rnd, why);
    }
  }

  @Test
  void unknownFieldLayerAndWrongLayoutAreRefused() {
    CodeBlock codes = SyntheticCodes.reluLike(50, 10, 6, 1).codes();
    TestIndexes.write(tmp.resolve("b"), codes, TestIndexes.rows(0, 50, new SplittableRandom(1)), 1);
    try (IndexReader r = IndexReader.open(tmp.resolve("b"))) {
      QueryCodes q = new QueryCodes(codes.slice(0, 2), 0);
      assertThatThrownBy(() -> Nearest.run(r, q, new Nearest.Params(3, "label = cat and colour = red", null, 1), null))
          .isInstanceOf(BadInputException.class).hasMessageContaining("unknown field 'colour'").hasMessageContaining("position 17");
      assertThatThrownBy(() -> Nearest.run(r, q, new Nearest.Params(3, null, List.of("h3"), 1), null))
          .isInstanceOf(BadInputException.class).hasMessageContaining("unknown layer 'h3'");
      QueryCodes other = new QueryCodes(Layers.relabel(codes.slice(0, 2), CodeLayout.parse("a:10,b:6")), 0);
      assertThatThrownBy(() -> Nearest.run(r, other, new Nearest.Params(3, null, null, 1), null))
          .isInstanceOf(BadInputException.class).hasMessageContaining("a:10,b:6").hasMessageContaining("h1:10,h2:6");
      assertThatThrownBy(() -> new Nearest.Params(0, null, null, 1)).isInstanceOf(BadInputException.class);
    }
  }

  /**
   * Short codes make most k-th distances ties. Every row tied at the k-th distance (--ties) and the
   * vote over that whole group equal a brute force over all codes written here: sort every live,
   * matching code by (distance, id), take the k-th distance, keep every code within it.
   */
  @Test
  void tiesAndTheVoteOverTheTieGroupEqualABruteForce() {
    for (int rep = 0; rep < 6; rep++) {
      long seed = Randoms.seed(100 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      String why = Randoms.describe(seed);
      int n = 200 + rnd.nextInt(400);
      CodeBlock all = Layers.relabel(rep % 2 == 0 ? SyntheticCodes.reluLike(n, 6, 4, seed).codes()
          : SyntheticCodes.uniform(n, 10, seed), CodeLayout.parse("h1:6,h2:4"));
      List<Map<String, String>> meta = TestIndexes.rows(0, n, rnd);
      Path dir = tmp.resolve("t" + rep);
      TestIndexes.write(dir, all, meta, 1 + rnd.nextInt(3));
      RoaringBitmap deleted = new RoaringBitmap();
      for (int i = rnd.nextInt(30); i > 0; i--) deleted.add(rnd.nextInt(n));
      if (!deleted.isEmpty())
        try (IndexWriter w = IndexWriter.open(dir)) {
          w.delete(deleted.toArray());
        }
      try (IndexReader r = IndexReader.open(dir)) {
        for (int t = 0; t < 12; t++) {
          Filter f = FILTERS.get(rnd.nextInt(FILTERS.size()));
          List<String> layers = rnd.nextInt(3) == 0 ? List.of("h2") : null;
          long[] mask = layers == null ? null : all.layout().mask(Layers.select(all.layout(), layers));
          int k = 1 + rnd.nextInt(rnd.nextBoolean() ? 8 : n + 10);
          boolean ties = rnd.nextBoolean(), overTies = rnd.nextBoolean();
          QueryCodes queries = new QueryCodes(SyntheticCodes.uniform(3, 10, rnd.nextLong()), 0);
          queries = new QueryCodes(Layers.relabel(queries.codes(), all.layout()), 0);
          List<Nearest.Result> got = Nearest.run(r, queries, new Nearest.Params(k, f.where(), layers, 1 + rnd.nextInt(2), ties, overTies),
              null);
          for (int q = 0; q < 3; q++) {
            long[] qc = queries.codes().code(q);
            // brute force: every matching live code, sorted by (distance, id)
            List<int[]> sorted = new ArrayList<>();
            for (int id = 0; id < n; id++) {
              if (deleted.contains(id) || !f.test().test(meta.get(id))) continue;
              int d = 0;
              for (int b = 0; b < 10; b++)
                if ((mask == null || (mask[0] >>> b & 1) != 0) && all.bit(id, b) != ((qc[0] >>> b & 1) != 0)) d++;
              sorted.add(new int[] {d, id});
            }
            sorted.sort((a, b) -> a[0] != b[0] ? Integer.compare(a[0], b[0]) : Integer.compare(a[1], b[1]));
            int group = Math.min(k, sorted.size());
            while (group > 0 && group < sorted.size() && sorted.get(group)[0] == sorted.get(k - 1)[0]) group++;
            int firstK = Math.min(k, sorted.size());
            List<Nearest.Neighbor> nbs = got.get(q).neighbors();
            String what = "k=" + k + " ties=" + ties + " overTies=" + overTies + " " + f.where() + " " + why;
            assertEquals(ties ? group : firstK, nbs.size(), what);
            for (int h = 0; h < nbs.size(); h++) {
              assertEquals(sorted.get(h)[1], nbs.get(h).id(), what);
              assertEquals(sorted.get(h)[0], nbs.get(h).distance(), what);
            }
            int counted = overTies ? group : firstK;
            Map<String, long[]> tally = new HashMap<>();
            int labeled = 0;
            for (int h = 0; h < counted; h++) {
              String label = meta.get(sorted.get(h)[1]).get("label");
              if (label == null) continue;
              labeled++;
              long[] v = tally.computeIfAbsent(label, x -> new long[2]);
              v[0]++;
              v[1] += sorted.get(h)[0];
            }
            Nearest.Vote vote = got.get(q).vote();
            if (labeled == 0) {
              assertEquals(null, vote, what);
              continue;
            }
            String best = tally.keySet().stream().sorted().min((a, b) -> {
              long[] x = tally.get(a), y = tally.get(b);
              return x[0] != y[0] ? Long.compare(y[0], x[0]) : Long.compare(x[1], y[1]);
            }).orElseThrow();
            int votes = (int) tally.get(best)[0];
            assertEquals(new Nearest.Vote(best, votes, labeled, votes / (double) labeled, counted, sorted.get(counted - 1)[0],
                counted > k, group - counted), vote, what);
          }
        }
      }
    }
  }

  /**
   * The demo's case: 9 examples at distance 1 from the query split 6 belt-slip / 3 normal, but the
   * first 5 by id are 3 normal / 2 belt-slip. The default vote counts all 9; only the vote limited
   * to the first k by id says normal, and then it says how many tied rows it left out.
   */
  @Test
  void idsNoLongerDecideTheVote() {
    CodeLayout layout = CodeLayout.parse("h:8");
    String[] labels = {"belt-slip", "normal", "belt-slip", "normal", "normal", "belt-slip", "belt-slip", "belt-slip", "belt-slip"};
    long[] words = new long[labels.length + 3];
    List<Map<String, String>> meta = new ArrayList<>();
    for (int i = 0; i < labels.length; i++) {
      words[i] = 1L << i % 8; // one bit from the all-zero query: distance 1
      meta.add(Map.of("key", "w" + i, "label", labels[i]));
    }
    for (int i = labels.length; i < words.length; i++) {
      words[i] = 0b111L << i % 5; // distance 3
      meta.add(Map.of("key", "w" + i, "label", "normal"));
    }
    TestIndexes.write(tmp.resolve("demo"), new CodeBlock(layout, words.length, words), meta, 2);
    try (IndexReader r = IndexReader.open(tmp.resolve("demo"))) {
      QueryCodes q = new QueryCodes(new CodeBlock(layout, 1, new long[1]), 1);
      Nearest.Result byDefault = Nearest.run(r, q, new Nearest.Params(5, null, null, 1), null).get(0);
      assertEquals(5, byDefault.neighbors().size());
      assertEquals(new Nearest.Vote("belt-slip", 6, 9, 6 / 9.0, 9, 1, true, 0), byDefault.vote());
      Nearest.Result listed = Nearest.run(r, q, new Nearest.Params(5, null, null, 1, true, true), null).get(0);
      assertEquals(9, listed.neighbors().size());
      assertEquals(byDefault.vote(), listed.vote());
      Nearest.Result firstK = Nearest.run(r, q, new Nearest.Params(5, null, null, 1, false, false), null).get(0);
      assertEquals(new Nearest.Vote("normal", 3, 5, 3 / 5.0, 5, 1, false, 4), firstK.vote());
      // no tie crosses the k-th place: k = 9 takes the whole group, k = 10 reaches distance 3
      assertEquals(new Nearest.Vote("belt-slip", 6, 9, 6 / 9.0, 9, 1, false, 0),
          Nearest.run(r, q, new Nearest.Params(9, null, null, 1), null).get(0).vote());
      assertEquals(12, Nearest.run(r, q, new Nearest.Params(10, null, null, 1, true, true), null).get(0).neighbors().size());
    }
  }

  private void check(Path dir, CodeBlock all, int n, List<Map<String, String>> meta, RoaringBitmap deleted, SplittableRandom rnd,
      String why) {
    CodeLayout layout = all.layout();
    try (IndexReader r = IndexReader.open(dir)) {
      for (int t = 0; t < 8; t++) {
        Filter f = FILTERS.get(rnd.nextInt(FILTERS.size()));
        List<String> layers = switch (rnd.nextInt(3)) {
          case 0 -> null;
          case 1 -> List.of("h2");
          default -> List.of("h1", "h2");
        };
        long[] mask = layers == null ? null : layout.mask(Layers.select(layout, layers));
        int k = 1 + rnd.nextInt(30);
        // queries: some indexed codes with a few bits flipped
        int nq = 1 + rnd.nextInt(5);
        long[] qw = new long[nq * layout.words()];
        for (int q = 0; q < nq; q++) {
          long[] c = all.code(rnd.nextInt(n));
          for (int flips = rnd.nextInt(4); flips > 0; flips--) {
            int b = rnd.nextInt(layout.bits());
            c[b >>> 6] ^= 1L << (b & 63);
          }
          System.arraycopy(c, 0, qw, q * layout.words(), c.length);
        }
        QueryCodes queries = new QueryCodes(new CodeBlock(layout, nq, qw), 10);
        List<Nearest.Result> got = Nearest.run(r, queries, new Nearest.Params(k, f.where(), layers, 1 + rnd.nextInt(3), false, false),
            null);
        assertEquals(nq, got.size(), why);
        for (int q = 0; q < nq; q++) {
          long[] qc = queries.codes().code(q);
          Hits want = BruteForce.knn(all.slice(0, n), qc, k, i -> !deleted.contains(i) && f.test().test(meta.get(i)), mask);
          Nearest.Result res = got.get(q);
          assertEquals(10 + q, res.row(), why);
          assertEquals(want.size(), res.neighbors().size(), f.where() + " " + why);
          Map<String, long[]> votes = new HashMap<>();
          for (int h = 0; h < want.size(); h++) {
            Nearest.Neighbor nb = res.neighbors().get(h);
            int id = want.ord(h);
            assertEquals(id, nb.id(), why);
            assertEquals(want.dist(h), nb.distance(), why);
            assertEquals("k" + id, nb.key(), why);
            assertEquals(meta.get(id).get("label"), nb.label(), why);
            assertEquals(meta.get(id).get("split"), nb.split(), why);
            assertEquals(Map.of("score", meta.get(id).get("score")), nb.meta(), why);
            // per-layer distances, bit by bit
            List<String> shown = layers == null ? List.of("h1", "h2") : layers;
            assertEquals(shown, new ArrayList<>(nb.layerDistances().keySet()), why);
            for (String layer : shown) {
              int s = layout.indexOf(layer), from = layout.start(s), to = from + layout.segments().get(s).bits(), d = 0;
              for (int b = from; b < to; b++) if (all.bit(id, b) != ((qc[b >>> 6] >>> (b & 63) & 1) != 0)) d++;
              assertEquals(d, nb.layerDistances().get(layer), why);
            }
            if (nb.label() != null) {
              long[] v = votes.computeIfAbsent(nb.label(), x -> new long[2]);
              v[0]++;
              v[1] += nb.distance();
            }
          }
          // vote over the k listed: most votes, then smallest total distance, then name
          String best = null;
          for (var e : votes.entrySet()) {
            long[] v = e.getValue();
            if (best == null) {
              best = e.getKey();
              continue;
            }
            long[] b = votes.get(best);
            if (v[0] > b[0] || (v[0] == b[0] && (v[1] < b[1] || (v[1] == b[1] && e.getKey().compareTo(best) < 0)))) best = e.getKey();
          }
          assertEquals(best, res.vote() == null ? null : res.vote().label(), why);
        }
      }
    }
  }
}
