package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.TreeMap;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

class RegionTest {
  @TempDir Path tmp;

  /**
   * The three-line network of {@link HandNet#threeLines()}: 7 regions (Zaslavsky 1975, see
   * CensusTest). The bounded triangle 0 < x, 0 < y, x + y < 1 has code 110; its three edges are
   * the lines of units 0, 1, 2, so flipping one neuron reaches each of its three neighbours (010,
   * 100, 111), and every populated region lies within 3 flips.
   */
  @Test
  void triangleOfThreeLines() {
    HandNet net = HandNet.threeLines();
    CodeBlock codes = net.grid(-4, 4, 41);
    TestIndexes.write(tmp.resolve("hand"), codes, null, 1);
    long[] triangle = CodeBlock.fromBits(net.layout(), new boolean[][] {net.code(0.25, 0.25)}).code(0);
    Map<String, Integer> count = new TreeMap<>();
    for (int i = 0; i < codes.size(); i++) count.merge(CensusTest.bits(codes, i, 0, 3), 1, Integer::sum);
    try (IndexReader r = IndexReader.open(tmp.resolve("hand"))) {
      Region.Result one = Region.run(r, triangle, 0, new Region.Params(1, null, null, 2), null, LabelIndex.of(r.meta(), r.maxId()));
      assertEquals(count.get("110"), one.same().count());
      assertEquals(List.of(), one.same().flipped());
      assertThat(one.nearby()).hasSize(3);
      Map<String, Integer> byFlip = new TreeMap<>();
      for (Region.Group g : one.nearby()) {
        assertEquals(1, g.distance());
        byFlip.put(g.flipped().get(0), g.count());
      }
      assertEquals(Map.of("hidden:0", count.get("010"), "hidden:1", count.get("100"), "hidden:2", count.get("111")), byFlip);
      Region.Result all = Region.run(r, triangle, 0, new Region.Params(3, null, null, 2), null, LabelIndex.of(r.meta(), r.maxId()));
      assertEquals(6, all.nearby().size()); // 7 regions, the query's own is "same"
      assertThat(all.nearby().stream().map(Region.Group::flipped)).doesNotContain(List.of("hidden:0", "hidden:1", "hidden:2"));
    }
  }

  /** Region groups equal a direct grouping of all live codes by their bits on the chosen layers. */
  @Test
  void equalsDirectGrouping() {
    for (int rep = 0; rep < 4; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      String why = Randoms.describe(seed);
      SyntheticCodes.Sample s = SyntheticCodes.reluLike(400, 8 + rnd.nextInt(8), 4 + rnd.nextInt(6), seed);
      CodeBlock codes = s.codes();
      CodeLayout layout = codes.layout();
      List<Map<String, String>> meta = TestIndexes.rows(0, codes.size(), rnd);
      Path dir = tmp.resolve("r" + rep);
      TestIndexes.write(dir, codes, meta, 2);
      RoaringBitmap deleted = new RoaringBitmap();
      for (int i = 0; i < 30; i++) deleted.add(rnd.nextInt(codes.size()));
      try (IndexWriter w = IndexWriter.open(dir)) {
        w.delete(deleted.toArray());
      }
      try (IndexReader r = IndexReader.open(dir)) {
        for (int t = 0; t < 5; t++) {
          List<String> layers = rnd.nextBoolean() ? null : List.of("h1");
          int from = 0, to = layers == null ? layout.bits() : layout.segments().get(0).bits();
          int radius = rnd.nextInt(4);
          long[] q = codes.code(rnd.nextInt(codes.size()));
          if (rnd.nextBoolean()) q[0] ^= 1L << rnd.nextInt(Math.min(64, to));
          String qs = bitsOf(q, from, to);
          String where = rnd.nextBoolean() ? null : "split = train";
          // direct: group live (and, with the filter, training) ids by their bit string on the chosen bits
          Map<String, List<Integer>> groups = new TreeMap<>();
          for (int i = 0; i < codes.size(); i++)
            if (!deleted.contains(i) && (where == null || meta.get(i).get("split").equals("train")))
              groups.computeIfAbsent(CensusTest.bits(codes, i, from, to), x -> new ArrayList<>()).add(i);
          QueryCodes qc = new QueryCodes(new CodeBlock(layout, 1, q), 7);
          Region.Result res = Region.run(r, qc, new Region.Params(radius, layers, where, 3), null).get(0);
          assertEquals(7, res.row(), why);
          List<Region.Group> got = new ArrayList<>(res.nearby());
          if (res.same().count() > 0) got.add(res.same());
          int expectedGroups = 0;
          List<List<Integer>> nearbyBits = new ArrayList<>(); // flipped bit positions of each expected nearby group
          Map<List<Integer>, Integer> countOf = new java.util.HashMap<>();
          for (var e : groups.entrySet()) {
            List<String> flipped = new ArrayList<>();
            List<Integer> flippedBits = new ArrayList<>();
            for (int b = 0; b < e.getKey().length(); b++)
              if (e.getKey().charAt(b) != qs.charAt(b)) {
                flipped.add(Layers.neuron(layout, from + b));
                flippedBits.add(from + b);
              }
            if (flipped.size() > radius) continue;
            expectedGroups++;
            if (!flipped.isEmpty()) {
              nearbyBits.add(flippedBits);
              countOf.put(flippedBits, e.getValue().size());
            }
            Region.Group g = got.stream().filter(x -> x.flipped().equals(flipped)).findFirst().orElseThrow(() -> new AssertionError(why));
            assertEquals(flipped.size(), g.distance(), why);
            assertEquals(e.getValue().size(), g.count(), why);
            Map<String, Integer> labels = new TreeMap<>();
            for (int i : e.getValue()) if (meta.get(i).get("label") != null) labels.merge(meta.get(i).get("label"), 1, Integer::sum);
            assertEquals(labels, new TreeMap<>(g.labels()), why);
            List<String> keys = e.getValue().stream().limit(3).map(i -> "k" + i).toList();
            assertEquals(keys, g.keys(), why);
          }
          assertEquals(expectedGroups, got.size(), why);
          // order: distance, then count descending, then the flipped neurons in bit order (lexicographic)
          nearbyBits.sort((a, b) -> {
            if (a.size() != b.size()) return Integer.compare(a.size(), b.size());
            if (!countOf.get(a).equals(countOf.get(b))) return Integer.compare(countOf.get(b), countOf.get(a));
            for (int i = 0; i < a.size(); i++) if (!a.get(i).equals(b.get(i))) return Integer.compare(a.get(i), b.get(i));
            return 0;
          });
          List<List<String>> wantOrder = nearbyBits.stream().map(l -> l.stream().map(b -> Layers.neuron(layout, b)).toList()).toList();
          assertEquals(wantOrder, res.nearby().stream().map(Region.Group::flipped).toList(), why);
        }
      }
    }
  }

  static String bitsOf(long[] q, int from, int to) {
    StringBuilder sb = new StringBuilder();
    for (int b = from; b < to; b++) sb.append((q[b >>> 6] >>> (b & 63) & 1) != 0 ? '1' : '0');
    return sb.toString();
  }
}
