package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.Reference.Example;
import io.actindex.cli.Reference.Hit;
import io.actindex.cli.Reference.Layer;
import io.actindex.core.Randoms;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code build}, {@code nearest}, {@code region}, {@code dupes}, {@code delete} and {@code compact}
 * (and {@code dupes --against}) through the command line with {@code --format json} on tiny indexes of odd widths (1 bit; 65
 * bits as 64 + 1; 129 bits as 1 + 127 + 1), codes with many exact copies (ties at every distance),
 * k of 1, n and past n, radius 0 and the full width, one layer only; checked against the test's own
 * bit-by-bit answers ({@link Reference}: Hamming distance as R. W. Hamming, Bell System Technical
 * Journal, 1950, defines it), before and after deleting a third of the examples and compacting.
 */
class OddWidthsEndToEndTest {
  @TempDir Path tmp;

  @Test
  void oddWidthsAnswerLikeTheBruteForce() throws Exception {
    String[][] layouts = {{"only:1"}, {"wide:64", "one:1"}, {"first:1", "mid:127", "last:1"}};
    int rep = 0;
    for (String[] layout : layouts) run(rep++, layout);
  }

  private void run(int rep, String[] layoutSpec) throws Exception {
    long seed = Randoms.seed(rep);
    SplittableRandom rnd = new SplittableRandom(seed);
    List<Layer> layers = Reference.layers(layoutSpec);
    int bits = layers.stream().mapToInt(Layer::bits).sum();
    String layout = String.join(",", layoutSpec);
    // 60 codes drawn from 6 distinct ones with a bit or two flipped in some: many exact copies
    boolean[][] distinct = new boolean[6][bits];
    for (boolean[] d : distinct) for (int b = 0; b < bits; b++) d[b] = rnd.nextBoolean();
    int n = 60;
    boolean[][] codes = new boolean[n][];
    for (int i = 0; i < n; i++) {
      codes[i] = distinct[rnd.nextInt(distinct.length)].clone();
      if (rnd.nextInt(3) == 0) codes[i][rnd.nextInt(bits)] ^= true;
    }
    List<Example> ex = NearestEndToEndTest.examples(codes, 0, "o", seed);
    Path dir = tmp.resolve("run-" + rep);
    Files.createDirectories(dir);
    Path idx = dir.resolve("idx");
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(dir.resolve("codes.npy"), codes).toString(),
        "--code-layout", layout, "--meta", NearestEndToEndTest.metaCsv(dir.resolve("meta.csv"), ex).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    boolean[][] queries = new boolean[5][];
    for (int i = 0; i < queries.length; i++) {
      queries[i] = i < 3 ? codes[rnd.nextInt(n)].clone() : new boolean[bits];
      if (i >= 3) for (int b = 0; b < bits; b++) queries[i][b] = i == 3 ? !codes[0][b] : rnd.nextBoolean();
    }
    Path q = Files2.bits(dir.resolve("q.npy"), queries);
    String why = Randoms.describe(seed) + " layout=" + layout;
    check(idx, q, queries, ex, layers, bits, why);

    // delete a third of the examples by key, compact, and ask again
    List<String> gone = new ArrayList<>();
    List<Example> live = new ArrayList<>();
    for (Example e : ex) {
      if (rnd.nextInt(3) == 0) gone.add(e.meta().get("key"));
      else live.add(e);
    }
    Cli.Result del = Cli.run("delete", "--index", idx.toString(), "--keys", Files2.text(dir.resolve("gone.txt"), gone).toString(), "--format", "json");
    assertThat(del.code()).as(del.describe()).isZero();
    check(idx, q, queries, live, layers, bits, why + " after delete");
    Cli.Result compact = Cli.run("compact", "--index", idx.toString());
    assertThat(compact.code()).as(compact.describe()).isZero();
    check(idx, q, queries, live, layers, bits, why + " after compact");
  }

  private static void check(Path idx, Path q, boolean[][] queries, List<Example> live, List<Layer> layers, int bits, String why)
      throws Exception {
    int n = live.size();
    List<List<Layer>> ons = new ArrayList<>(List.of(layers));
    if (layers.size() > 1) ons.add(List.of(layers.get(layers.size() - 1)));
    for (List<Layer> on : ons) {
      int onBits = on.stream().mapToInt(Layer::bits).sum();
      List<String> layerArgs = on.size() == layers.size() ? List.of() : List.of("--layers", on.get(0).name());
      for (int k : new int[] {1, n, n + 7}) {
        List<String> args = new ArrayList<>(List.of("nearest", "--index", idx.toString(), "--codes", q.toString(), "-k", "" + k, "--format", "json"));
        args.addAll(layerArgs);
        JsonNode doc = NearestEndToEndTest.json(args.toArray(String[]::new));
        for (int qi = 0; qi < queries.length; qi++) {
          List<Hit> want = Reference.knn(live, queries[qi], k, m -> true, on);
          List<Hit> got = new ArrayList<>();
          for (JsonNode nb : doc.get("results").get(qi).get("neighbors")) got.add(new Hit(nb.get("id").asInt(), nb.get("distance").asInt()));
          assertThat(got).as(why + " nearest k=" + k + " layers=" + on + " query " + qi).isEqualTo(want);
        }
      }
      for (int radius : new int[] {0, onBits}) {
        List<String> args = new ArrayList<>(List.of("region", "--index", idx.toString(), "--codes", q.toString(), "--radius", "" + radius,
            "--format", "json"));
        args.addAll(layerArgs);
        JsonNode doc = NearestEndToEndTest.json(args.toArray(String[]::new));
        for (int qi = 0; qi < queries.length; qi++) {
          Map<String, Reference.Group> want = Reference.groups(live, queries[qi], radius, on);
          Reference.Group same = want.remove("");
          JsonNode r = doc.get("results").get(qi);
          String what = why + " region radius=" + radius + " layers=" + on + " query " + qi;
          assertThat(r.get("same").get("count").asInt()).as(what).isEqualTo(same == null ? 0 : same.count());
          assertThat(r.get("nearby").size()).as(what).isEqualTo(want.size());
          int total = 0;
          for (JsonNode g : r.get("nearby")) {
            List<String> flipped = new ArrayList<>();
            for (JsonNode f : g.get("flipped")) flipped.add(f.asText());
            Reference.Group expected = want.get(String.join(" ", flipped));
            assertThat(expected).as(what + " flipped " + flipped).isNotNull();
            assertThat(g.get("count").asInt()).as(what + " flipped " + flipped).isEqualTo(expected.count());
            assertThat(g.get("distance").asInt()).as(what).isEqualTo(flipped.size());
            total += expected.count();
          }
          if (radius == onBits) assertThat(total + (same == null ? 0 : same.count())).as(what + ": every example is within the full width").isEqualTo(n);
        }
      }
      for (int radius : new int[] {0, onBits}) {
        long pairs = 0;
        for (int a = 0; a < n; a++)
          for (int b = a + 1; b < n; b++) if (Reference.distance(live.get(a).bits(), live.get(b).bits(), on) <= radius) pairs++;
        List<String> args = new ArrayList<>(List.of("dupes", "--index", idx.toString(), "--radius", "" + radius, "--format", "json"));
        args.addAll(layerArgs);
        JsonNode s = NearestEndToEndTest.json(args.toArray(String[]::new)).get("summary");
        String what = why + " dupes radius=" + radius + " layers=" + on;
        assertThat(s.get("pairs").asLong()).as(what).isEqualTo(pairs);
        assertThat(s.get("bits").asInt()).as(what).isEqualTo(onBits);
        if (radius == onBits) assertThat(pairs).as(what).isEqualTo((long) n * (n - 1) / 2);
      }
      // the queries against the index: every (row, id, distance) within the radius
      for (int radius : new int[] {0, 1, onBits}) {
        Path pairsFile = idx.resolveSibling("against-" + radius + ".csv");
        List<String> args = new ArrayList<>(List.of("dupes", "--index", idx.toString(), "--radius", "" + radius, "--against", q.toString(),
            "--pairs", pairsFile.toString(), "--format", "json"));
        args.addAll(layerArgs);
        NearestEndToEndTest.json(args.toArray(String[]::new));
        List<String> want = new ArrayList<>(List.of("row,id,distance"));
        for (int row = 0; row < queries.length; row++)
          for (Example e : live) {
            int d = Reference.distance(queries[row], e.bits(), on);
            if (d <= radius) want.add(row + "," + e.id() + "," + d);
          }
        assertThat(Files.readAllLines(pairsFile)).as(why + " dupes --against radius=" + radius + " layers=" + on).isEqualTo(want);
      }
    }
  }
}
