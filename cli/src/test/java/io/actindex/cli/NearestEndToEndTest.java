package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.Reference.Example;
import io.actindex.cli.Reference.Hit;
import io.actindex.cli.Reference.Layer;
import io.actindex.cli.format.JsonWriterTest;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.function.Predicate;
import org.junit.jupiter.api.RepeatedTest;
import org.junit.jupiter.api.RepetitionInfo;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * {@code build} then {@code nearest --format json} through the command line, checked against the
 * test's own brute-force scan (distances, order, tie-break by id, keys, labels, metadata), on
 * uniform random and on ReLU-like codes, with {@code --where}, {@code --layers}, {@code --rows},
 * after {@code add} and after deletes; the label vote over every neighbour within the k-th distance,
 * and {@code --ties} on short codes.
 */
class NearestEndToEndTest {
  @TempDir Path tmp;

  static final List<Layer> LAYERS = Reference.layers("h1:40", "h2:24");
  static final String LAYOUT = "h1:40,h2:24";

  /** Codes: uniform random (even repetitions) or ReLU-like from one random network (odd), plus queries. */
  record Data(boolean[][] index, boolean[][] more, boolean[][] queries) {}

  static Data data(int n, int m, int q, boolean relu, long seed) {
    if (relu) {
      SyntheticCodes.ReluNet net = new SyntheticCodes.ReluNet(32, 40, 24, 6, seed);
      boolean[][] qs = bits(net.sample(q, 0, seed + 3).codes());
      boolean[][] idx = bits(net.sample(n, 0, seed + 1).codes());
      qs[0] = idx[5].clone(); // a query sitting exactly on indexed codes: distance-0 ties
      return new Data(idx, bits(net.sample(m, 0, seed + 2).codes()), qs);
    }
    CodeLayout layout = CodeLayout.parse(LAYOUT);
    return new Data(bits(relabel(SyntheticCodes.uniform(n, 64, seed), layout)),
        bits(relabel(SyntheticCodes.uniform(m, 64, seed + 1), layout)), bits(relabel(SyntheticCodes.uniform(q, 64, seed + 2), layout)));
  }

  static CodeBlock relabel(CodeBlock c, CodeLayout layout) {
    return new CodeBlock(layout, c.size(), c.words());
  }

  static boolean[][] bits(CodeBlock c) {
    boolean[][] out = new boolean[c.size()][c.layout().bits()];
    for (int i = 0; i < c.size(); i++) for (int b = 0; b < out[i].length; b++) out[i][b] = c.bit(i, b);
    return out;
  }

  static final String[] LABELS = {"idle", "run", "fault"};

  /** Metadata rows for ids {@code first..}: key, label, split, line (sometimes empty), rpm (number). */
  static List<Example> examples(boolean[][] codes, int first, String keyPrefix, long seed) {
    SplittableRandom rnd = new SplittableRandom(seed);
    List<Example> out = new ArrayList<>();
    for (int i = 0; i < codes.length; i++) {
      Map<String, String> meta = new java.util.LinkedHashMap<>();
      meta.put("key", keyPrefix + "-" + i);
      meta.put("label", LABELS[rnd.nextInt(3)]);
      meta.put("split", rnd.nextInt(4) == 0 ? "test" : "train");
      if (rnd.nextInt(5) != 0) meta.put("line", "L" + (1 + rnd.nextInt(3)));
      meta.put("rpm", Integer.toString(1000 + 50 * rnd.nextInt(21)));
      out.add(new Example(first + i, codes[i], meta));
    }
    return out;
  }

  static Path metaCsv(Path file, List<Example> rows) {
    List<String> lines = new ArrayList<>(List.of("key,label,split,line,rpm"));
    for (Example e : rows) {
      Map<String, String> m = e.meta();
      lines.add(String.join(",", m.get("key"), m.get("label"), m.get("split"), m.getOrDefault("line", ""), m.get("rpm")));
    }
    return Files2.text(file, lines);
  }

  /**
   * Runs the command and returns its JSON document (asserting exit 0 and nothing on stderr but
   * nearest's note that -k is above the live examples, which random k here often is).
   */
  static JsonNode json(String... args) throws Exception {
    Cli.Result r = Cli.run(args);
    assertThat(r.code()).as(r.describe()).isZero();
    assertThat(r.err().replaceAll("(?m)^note: -k \\d+ is more than the \\d+ live examples? [^\n]*\\R", "")).as(r.describe()).isEmpty();
    return JsonWriterTest.STRICT.readTree(r.out());
  }

  /** Checks one nearest JSON document (without --ties) against the brute-force scan. */
  static void check(JsonNode doc, int k, List<Example> live, boolean[][] queries, int firstRow,
      Predicate<Map<String, String>> accept, List<Layer> on, String what) {
    check(doc, k, false, live, queries, firstRow, accept, on, what);
  }

  /** Every live, accepted example within the k-th distance of the brute-force order (ties at the k-th included). */
  static List<Hit> tieGroup(List<Example> live, boolean[] q, int k, Predicate<Map<String, String>> accept, List<Layer> on) {
    List<Hit> all = Reference.knn(live, q, live.size(), accept, on);
    if (all.size() <= k) return all;
    int kth = all.get(k - 1).distance();
    return all.stream().filter(h -> h.distance() <= kth).toList();
  }

  /**
   * Checks one nearest JSON document against the brute-force scan: the first k by (distance, id),
   * or with {@code ties} the whole group within the k-th distance; the vote always over that group
   * (most votes, then the smallest total distance, then the smaller name).
   */
  static void check(JsonNode doc, int k, boolean ties, List<Example> live, boolean[][] queries, int firstRow,
      Predicate<Map<String, String>> accept, List<Layer> on, String what) {
    assertThat(doc.get("k").asInt()).as(what).isEqualTo(k);
    assertThat(doc.get("ties").asBoolean()).as(what).isEqualTo(ties);
    JsonNode results = doc.get("results");
    assertThat(results.size()).as(what).isEqualTo(queries.length);
    Map<Integer, Example> byId = new java.util.HashMap<>();
    for (Example e : live) byId.put(e.id(), e);
    for (int qi = 0; qi < queries.length; qi++) {
      JsonNode r = results.get(qi);
      assertThat(r.get("query").asLong()).as(what).isEqualTo(firstRow + qi);
      List<Hit> group = tieGroup(live, queries[qi], k, accept, on);
      List<Hit> expected = ties ? group : Reference.knn(live, queries[qi], k, accept, on);
      checkVote(r.get("vote"), group, k, live, what + ", query " + qi);
      JsonNode nbs = r.get("neighbors");
      List<Hit> got = new ArrayList<>();
      for (JsonNode nb : nbs) got.add(new Hit(nb.get("id").asInt(), nb.get("distance").asInt()));
      assertThat(got).as(what + ", query " + qi).isEqualTo(expected);
      for (JsonNode nb : nbs) {
        Example e = byId.get(nb.get("id").asInt());
        assertThat(nb.get("key").asText()).as(what).isEqualTo(e.meta().get("key"));
        assertThat(nb.get("label").asText()).as(what).isEqualTo(e.meta().get("label"));
        assertThat(nb.get("split").asText()).as(what).isEqualTo(e.meta().get("split"));
        JsonNode meta = nb.get("meta");
        assertThat(meta.path("rpm").asText()).as(what).isEqualTo(e.meta().get("rpm"));
        assertThat(meta.has("line")).as(what).isEqualTo(e.meta().containsKey("line"));
        if (e.meta().containsKey("line")) assertThat(meta.get("line").asText()).isEqualTo(e.meta().get("line"));
        for (Iterator<String> it = meta.fieldNames(); it.hasNext(); )
          assertThat(it.next()).as(what + ": meta holds only the extra columns").isIn("line", "rpm", "source");
        JsonNode ld = nb.get("layer_distances");
        assertThat(ld.size()).as(what).isEqualTo(on.size());
        int i = 0;
        for (Iterator<Map.Entry<String, JsonNode>> it = ld.fields(); it.hasNext(); i++) {
          Map.Entry<String, JsonNode> f = it.next();
          assertThat(f.getKey()).as(what).isEqualTo(on.get(i).name());
          assertThat(f.getValue().asInt()).as(what).isEqualTo(Reference.distance(queries[qi], e.bits(), List.of(on.get(i))));
        }
      }
    }
  }

  static void checkVote(JsonNode vote, List<Hit> group, int k, List<Example> live, String what) {
    Map<Integer, Example> byId = new java.util.HashMap<>();
    for (Example e : live) byId.put(e.id(), e);
    Map<String, int[]> tally = new java.util.TreeMap<>(); // label -> {votes, total distance}; sorted names
    for (Hit h : group) {
      int[] t = tally.computeIfAbsent(byId.get(h.id()).meta().get("label"), x -> new int[2]);
      t[0]++;
      t[1] += h.distance();
    }
    if (group.isEmpty()) {
      assertThat(vote.isNull()).as(what).isTrue();
      return;
    }
    String best = null;
    for (var e : tally.entrySet())
      if (best == null || e.getValue()[0] > tally.get(best)[0]
          || (e.getValue()[0] == tally.get(best)[0] && e.getValue()[1] < tally.get(best)[1])) best = e.getKey();
    assertThat(vote.get("label").asText()).as(what).isEqualTo(best);
    assertThat(vote.get("votes").asInt()).as(what).isEqualTo(tally.get(best)[0]);
    assertThat(vote.get("of").asInt()).as(what).isEqualTo(group.size());
    assertThat(vote.get("agreement").asDouble()).as(what).isEqualTo(tally.get(best)[0] / (double) group.size());
    assertThat(vote.get("neighbors").asInt()).as(what).isEqualTo(group.size());
    assertThat(vote.get("within_distance").asInt()).as(what).isEqualTo(group.get(group.size() - 1).distance());
    assertThat(vote.get("ties_included").asBoolean()).as(what).isEqualTo(group.size() > k);
    assertThat(vote.get("ties_left_out").asInt()).as(what).isZero();
  }

  /**
   * Short codes (10 bits, so the k-th distance is nearly always tied): --ties lists the whole group
   * within the k-th distance, and the vote, with or without --ties, counts that group.
   */
  @RepeatedTest(3)
  void tiesListTheWholeGroupAndTheVoteCountsIt(RepetitionInfo rep) throws Exception {
    long seed = Randoms.seed(300 + rep.getCurrentRepetition());
    String what = Randoms.describe(seed);
    CodeLayout layout = CodeLayout.parse("s1:6,s2:4");
    boolean[][] codes = bits(relabel(SyntheticCodes.uniform(300, 10, seed), layout));
    boolean[][] queries = bits(relabel(SyntheticCodes.uniform(6, 10, seed + 1), layout));
    List<Example> ex = examples(codes, 0, "t", seed);
    List<Layer> on = Reference.layers("s1:6", "s2:4");
    Path idx = tmp.resolve("idx");
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("codes.npy"), codes).toString(),
        "--code-layout", "s1:6,s2:4", "--meta", metaCsv(tmp.resolve("meta.csv"), ex).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    String q = Files2.bits(tmp.resolve("q.npy"), queries).toString();
    boolean sawTies = false;
    for (int k : new int[] {1, 5, 12}) {
      check(json("nearest", "--index", idx.toString(), "--codes", q, "-k", Integer.toString(k), "--ties", "--format", "json"),
          k, true, ex, queries, 0, m -> true, on, what + " --ties k=" + k);
      check(json("nearest", "--index", idx.toString(), "--codes", q, "-k", Integer.toString(k), "--format", "json"),
          k, false, ex, queries, 0, m -> true, on, what + " k=" + k);
      check(json("nearest", "--index", idx.toString(), "--codes", q, "-k", Integer.toString(k), "--ties", "--format", "json",
              "--where", "split = train", "--layers", "s2"),
          k, true, ex, queries, 0, m -> m.get("split").equals("train"), List.of(on.get(1)), what + " --ties where layers k=" + k);
      for (boolean[] query : queries) sawTies |= tieGroup(ex, query, k, m -> true, on).size() > k;
    }
    assertThat(sawTies).as("10-bit codes tie at the k-th distance").isTrue();
    // --vote-ties exclude: the first k by id vote, and the JSON says how many tied rows were left out
    JsonNode first = json("nearest", "--index", idx.toString(), "--codes", q, "-k", "5", "--vote-ties", "exclude", "--format", "json");
    for (int qi = 0; qi < queries.length; qi++) {
      JsonNode vote = first.get("results").get(qi).get("vote");
      assertThat(vote.get("neighbors").asInt()).as(what).isEqualTo(5);
      assertThat(vote.get("ties_included").asBoolean()).as(what).isFalse();
      assertThat(vote.get("ties_left_out").asInt()).as(what).isEqualTo(tieGroup(ex, queries[qi], 5, m -> true, on).size() - 5);
    }
  }

  @RepeatedTest(4)
  void buildThenNearestEqualsBruteForce(RepetitionInfo rep) throws Exception {
    long seed = Randoms.seed(rep.getCurrentRepetition());
    String what = Randoms.describe(seed) + (rep.getCurrentRepetition() % 2 == 1 ? " relu" : " uniform");
    Data d = data(240, 60, 12, rep.getCurrentRepetition() % 2 == 1, seed);
    List<Example> ex = examples(d.index(), 0, "a", seed);
    Path idx = tmp.resolve("idx");
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("codes.npy"), d.index()).toString(),
        "--code-layout", LAYOUT, "--meta", metaCsv(tmp.resolve("meta.csv"), ex).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    String q = Files2.bits(tmp.resolve("q.npy"), d.queries()).toString();

    check(json("nearest", "--index", idx.toString(), "--codes", q, "-k", "7", "--format", "json"),
        7, ex, d.queries(), 0, m -> true, LAYERS, what + " plain");
    // k larger than the index
    check(json("nearest", "--index", idx.toString(), "--codes", q, "-k", "500", "--format", "json", "--rows", "0:2"),
        500, ex, java.util.Arrays.copyOfRange(d.queries(), 0, 2), 0, m -> true, LAYERS, what + " k>n");
    check(json("nearest", "--index", idx.toString(), "--codes", q, "-k", "5", "--format", "json",
            "--where", "split = train and rpm >= 1500"),
        5, ex, d.queries(), 0, m -> m.get("split").equals("train") && Integer.parseInt(m.get("rpm")) >= 1500, LAYERS, what + " where");
    check(json("nearest", "--index", idx.toString(), "--codes", q, "-k", "5", "--format", "json",
            "--where", "line != L2 or label in (fault, idle)"),
        5, ex, d.queries(), 0, m -> !"L2".equals(m.get("line")) || m.get("label").equals("fault") || m.get("label").equals("idle"),
        LAYERS, what + " where-2");
    check(json("nearest", "--index", idx.toString(), "--codes", q, "-k", "6", "--format", "json", "--layers", "h2"),
        6, ex, d.queries(), 0, m -> true, List.of(LAYERS.get(1)), what + " layers h2");
    check(json("nearest", "--index", idx.toString(), "--codes", q, "-k", "3", "--format", "json", "--rows", "4:9", "--threads", "3"),
        3, ex, java.util.Arrays.copyOfRange(d.queries(), 4, 9), 4, m -> true, LAYERS, what + " rows 4:9, 3 threads");
  }

  @RepeatedTest(2)
  void afterAddAndDeletes(RepetitionInfo rep) throws Exception {
    long seed = Randoms.seed(100 + rep.getCurrentRepetition());
    String what = Randoms.describe(seed);
    Data d = data(150, 70, 8, rep.getCurrentRepetition() == 1, seed);
    List<Example> ex = new ArrayList<>(examples(d.index(), 0, "a", seed));
    List<Example> more = examples(d.more(), d.index().length, "b", seed + 9);
    Path idx = tmp.resolve("idx");
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("codes.npy"), d.index()).toString(),
        "--code-layout", LAYOUT, "--meta", metaCsv(tmp.resolve("meta.csv"), ex).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    JsonNode added = json("add", "--index", idx.toString(), "--codes", Files2.bits(tmp.resolve("more.npy"), d.more()).toString(),
        "--meta", metaCsv(tmp.resolve("more.csv"), more).toString(), "--format", "json");
    assertThat(added.get("first_id").asInt()).isEqualTo(d.index().length);
    assertThat(added.get("rows").asInt()).isEqualTo(d.more().length);
    assertThat(added.get("layout").asText()).isEqualTo(LAYOUT);
    ex.addAll(more);
    String q = Files2.bits(tmp.resolve("q.npy"), d.queries()).toString();
    check(json("nearest", "--index", idx.toString(), "--codes", q, "-k", "9", "--format", "json"),
        9, ex, d.queries(), 0, m -> true, LAYERS, what + " after add");

    // delete every id that was a first or second neighbour, plus a few from the added segment
    RoaringBitmap gone = new RoaringBitmap();
    for (boolean[] query : d.queries())
      for (Hit h : Reference.knn(ex, query, 2, m -> true, LAYERS)) gone.add(h.id());
    gone.add(d.index().length + 3);
    gone.add(7);
    try (IndexWriter w = IndexWriter.open(idx)) {
      w.delete(gone.toArray());
    }
    List<Example> live = ex.stream().filter(e -> !gone.contains(e.id())).toList();
    check(json("nearest", "--index", idx.toString(), "--codes", q, "-k", "9", "--format", "json"),
        9, live, d.queries(), 0, m -> true, LAYERS, what + " after deletes");
    JsonNode info = json("info", "--index", idx.toString(), "--format", "json");
    assertThat(info.get("layout").asText()).isEqualTo(LAYOUT);
    assertThat(info.get("next_id").asInt()).isEqualTo(ex.size());
    assertThat(info.get("live").asInt()).isEqualTo(live.size());
    assertThat(info.get("deleted").asInt()).isEqualTo(gone.getCardinality());
    assertThat(info.get("segments").size()).as("build and add wrote one segment each").isEqualTo(2);
    assertThat(info.get("segments").get(1).get("first_id").asInt()).isEqualTo(d.index().length);
    Cli.Result infoTable = Cli.run("info", "--index", idx.toString());
    assertThat(infoTable.code()).as(infoTable.describe()).isZero();
    assertThat(infoTable.out()).contains("h1 (40 bits), h2 (24 bits)").contains(live.size() + " live");
    check(json("nearest", "--index", idx.toString(), "--codes", q, "-k", "4", "--format", "json", "--where", "label = run",
            "--layers", "h1"),
        4, live, d.queries(), 0, m -> m.get("label").equals("run"), List.of(LAYERS.get(0)), what + " after deletes, where, layers");
  }

  /** Builds {@code idx} from d's index codes (layout {@link #LAYOUT}) with ex as metadata; returns the queries' file. */
  private String buildWithMeta(Path idx, Data d, List<Example> ex) throws Exception {
    assertThat(Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), d.index()).toString(),
        "--code-layout", LAYOUT, "--meta", metaCsv(tmp.resolve("m.csv"), ex).toString()).code()).isZero();
    return Files2.bits(tmp.resolve("q.npy"), d.queries()).toString();
  }

  @Test
  void tableAndCsvCarryTheSameNeighbours() throws Exception {
    long seed = Randoms.seed(200);
    Data d = data(120, 1, 3, true, seed);
    List<Example> ex = examples(d.index(), 0, "w", seed);
    Path idx = tmp.resolve("idx");
    String q = buildWithMeta(idx, d, ex);
    Cli.Result csv = Cli.run("nearest", "--index", idx.toString(), "--codes", q, "-k", "4", "--format", "csv");
    assertThat(csv.code()).as(csv.describe()).isZero();
    String[] lines = csv.out().split("\\R");
    assertThat(lines[0]).isEqualTo("query,rank,id,key,distance,distance_h1,distance_h2,label,split,line,rpm,"
        + "vote_label,vote_votes,vote_of,vote_agreement,vote_neighbors,vote_within_distance,vote_ties_included,vote_ties_left_out");
    assertThat(lines).hasSize(1 + 3 * 4);
    for (int qi = 0; qi < 3; qi++) {
      List<Hit> exp = Reference.knn(ex, d.queries()[qi], 4, m -> true, LAYERS);
      for (int r = 0; r < 4; r++) {
        String[] f = lines[1 + qi * 4 + r].split(",", -1);
        assertThat(f[0]).isEqualTo(Integer.toString(qi));
        assertThat(f[1]).isEqualTo(Integer.toString(r + 1));
        assertThat(Integer.parseInt(f[2])).isEqualTo(exp.get(r).id());
        assertThat(Integer.parseInt(f[4])).isEqualTo(exp.get(r).distance());
        assertThat(Integer.parseInt(f[5]) + Integer.parseInt(f[6])).isEqualTo(exp.get(r).distance());
        // the vote columns: over the group within the 4th distance, the same on every row of the query
        List<Hit> group = tieGroup(ex, d.queries()[qi], 4, m -> true, LAYERS);
        assertThat(Integer.parseInt(f[13])).isEqualTo(group.size());
        assertThat(Integer.parseInt(f[15])).isEqualTo(group.size());
        assertThat(Integer.parseInt(f[16])).isEqualTo(group.get(group.size() - 1).distance());
        assertThat(f[17]).isEqualTo(Boolean.toString(group.size() > 4));
        assertThat(f[18]).isEqualTo("0");
      }
    }
    Cli.Result table = Cli.run("nearest", "--index", idx.toString(), "--codes", q, "-k", "4");
    assertThat(table.code()).as(table.describe()).isZero();
    assertThat(table.out()).contains("query row 0  vote: ").contains("agreement")
        .containsPattern("rank +distance +h1 +h2 +key +label +split +line +rpm");
    // the vote line: count the labels of query 0's neighbours within the 4th distance (query 0 sits on
    // an indexed code, so that group may hold more than 4)
    List<Hit> exp0 = Reference.knn(ex, d.queries()[0], 4, m -> true, LAYERS);
    List<Hit> group0 = tieGroup(ex, d.queries()[0], 4, m -> true, LAYERS);
    Map<String, Integer> votes = new java.util.HashMap<>();
    for (Hit h : group0) votes.merge(ex.get(h.id()).meta().get("label"), 1, Integer::sum);
    int top = votes.values().stream().mapToInt(Integer::intValue).max().orElseThrow();
    String line = "(" + top + " of " + group0.size() + ", agreement " + Math.round(100.0 * top / group0.size()) + "%)";
    if (group0.size() > 4)
      line += " over " + group0.size() + " neighbours within distance " + group0.get(group0.size() - 1).distance()
          + " (ties at the 4th distance included)";
    assertThat(table.out()).as(table.describe()).contains(line);
    for (Hit h : exp0) assertThat(table.out()).contains(ex.get(h.id()).meta().get("key"));
  }
  /**
   * The CSV columns come from the index (its layers, or those of --layers, and its metadata
   * fields), not from the neighbours found: a --where that matched nothing printed a header without
   * the distance_LAYER and metadata columns, and one that matched only examples without 'line'
   * dropped the 'line' column, so two runs on one index gave files of different columns.
   */
  @Test
  void csvColumnsAreTheSameWhateverTheNeighbours() throws Exception {
    long seed = Randoms.seed(201);
    Data d = data(60, 1, 2, false, seed);
    List<Example> ex = examples(d.index(), 0, "w", seed);
    Path idx = tmp.resolve("idx");
    String q = buildWithMeta(idx, d, ex);
    String votes = "vote_label,vote_votes,vote_of,vote_agreement,vote_neighbors,vote_within_distance,vote_ties_included,vote_ties_left_out";
    String[][] wheres = {{}, {"--where", "label = nothing"}, {"--where", "line != L1 and line != L2 and line != L3"}};
    for (String[] where : wheres)
      for (boolean h2 : new boolean[] {false, true}) {
        List<String> args = new ArrayList<>(List.of("nearest", "--index", idx.toString(), "--codes", q, "-k", "3", "--format", "csv"));
        args.addAll(List.of(where));
        if (h2) args.addAll(List.of("--layers", "h2"));
        Cli.Result r = Cli.run(args.toArray(String[]::new));
        assertThat(r.code()).as(r.describe()).isZero();
        assertThat(r.out().split("\\R")[0]).as(r.describe())
            .isEqualTo("query,rank,id,key,distance," + (h2 ? "" : "distance_h1,") + "distance_h2,label,split,line,rpm," + votes);
      }
  }
  /** A label holding an ESC sequence reached the terminal through the vote line of the table. */
  @Test
  void controlCharactersInMetadataDoNotReachTheTerminal() throws Exception {
    boolean[][] codes = new boolean[4][8];
    for (int i = 0; i < 4; i++) codes[i][i] = true;
    List<String> meta = new ArrayList<>(List.of("key,label"));
    for (int i = 0; i < 4; i++) meta.add("k" + i + ",\"red\u001b[31m\u0007\"");
    Path idx = tmp.resolve("idx");
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), codes).toString(),
        "--meta", Files2.text(tmp.resolve("m.csv"), meta).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    Cli.Result r = Cli.run("nearest", "--index", idx.toString(), "--codes", tmp.resolve("c.npy").toString(), "-k", "2");
    assertThat(r.code()).as(r.describe()).isZero();
    assertThat(r.out()).contains("vote: red\\u001b[31m\\u0007").doesNotContain("\u001b").doesNotContain("\u0007");
    // region's line about the query's own region names its labels and keys too
    Cli.Result g = Cli.run("region", "--index", idx.toString(), "--codes", tmp.resolve("c.npy").toString());
    assertThat(g.code()).as(g.describe()).isZero();
    assertThat(g.out()).contains("(red\\u001b[31m\\u0007 1; e.g. k0)").doesNotContain("\u001b").doesNotContain("\u0007");
  }
}
