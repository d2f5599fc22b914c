package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.format.JsonWriterTest;
import io.actindex.core.Randoms;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A valid {@code --where} that matches no live example: a question with an empty answer for the
 * commands that search or select (nearest, region, dupes, delete: exit 0, one note on stderr naming
 * the filter, the usual output with no rows in every format); a refusal (exit 2, one line naming the
 * option and the count) for compare, whose samples need at least 2 rows each. The index stays
 * byte-identical throughout. Two such filters: one no example matches, one only deleted examples
 * match.
 */
class WhereMatchesNothingEndToEndTest {
  static final int ROWS = 40;
  @TempDir Path tmp;
  Path idx, acts;
  int live;
  long seed;

  @BeforeEach
  void buildIndexAndDeleteTheTestSplit() throws Exception {
    seed = Randoms.seed(501);
    SplittableRandom rnd = new SplittableRandom(seed);
    idx = tmp.resolve("idx");
    acts = Files2.floats(tmp.resolve("acts.npy"), SourcesEndToEndTest.activations(ROWS, 8, rnd));
    List<String> meta = new ArrayList<>(List.of("key,label,split"));
    for (int i = 0; i < ROWS; i++) meta.add("k" + i + "," + (i % 2 == 0 ? "a" : "b") + "," + (i % 3 == 0 ? "test" : "train"));
    ok(Cli.run("build", "--out", idx.toString(), "--activations", acts.toString(), "--meta", Files2.text(tmp.resolve("m.csv"), meta).toString()));
    JsonNode deleted = json(Cli.run("delete", "--index", idx.toString(), "--where", "split = test", "--format", "json"));
    live = deleted.get("live").asInt();
    assertThat(live).as(Randoms.describe(seed)).isEqualTo(ROWS - (ROWS + 2) / 3);
  }

  @Test
  void searchesAnswerEmptyWithOneNoteNamingTheFilter() throws Exception {
    Map<String, String> before = Files2.checksums(idx);
    for (String where : List.of("split = test", "split = \"nowhere\"")) {
      String note = "--where '" + where + "' matches no live example";
      String i = idx.toString(), a = acts.toString();
      for (String format : List.of("table", "json", "csv")) {
        empty(note, "nearest", "--index", i, "--activations", a, "-k", "3", "--where", where, "--format", format);
        empty(note, "nearest", "--index", i, "--activations", a, "-k", "3", "--refine", "cosine", "--where", where, "--format", format);
        empty(note, "region", "--index", i, "--activations", a, "--where", where, "--format", format);
        empty(note, "dupes", "--index", i, "--radius", "1", "--where", where, "--format", format);
        empty(note, "dupes", "--index", i, "--radius", "1", "--against", a, "--where", where, "--format", format);
        empty(note, "delete", "--index", i, "--where", where, "--format", format);
      }

      for (String[] refine : List.of(new String[0], new String[] {"--refine", "cosine"})) {
        List<String> args = new ArrayList<>(List.of("nearest", "--index", i, "--activations", a, "-k", "3"));
        args.addAll(List.of(refine));
        args.addAll(List.of("--where", where, "--format", "json"));
        JsonNode near = json(empty(note, args.toArray(String[]::new)));
        assertThat(near.get("k").asInt()).isEqualTo(3);
        assertThat(near.has("refine")).isEqualTo(refine.length > 0);
        assertThat(near.get("results")).hasSize(ROWS);
        for (JsonNode r : near.get("results")) {
          assertThat(r.get("neighbors")).as(r.toString()).isEmpty();
          assertThat(r.get("vote").isNull()).as(r.toString()).isTrue();
        }
        args.set(args.size() - 1, "csv");
        List<String> unfiltered = new ArrayList<>(List.of("nearest", "--index", i, "--activations", a, "-k", "3", "--format", "csv"));
        unfiltered.addAll(List.of(refine));
        assertThat(empty(note, args.toArray(String[]::new)).out().lines().toList()).as(where)
            .containsExactly(header(unfiltered.toArray(String[]::new)));
      }

      JsonNode region = json(empty(note, "region", "--index", i, "--activations", a, "--where", where, "--format", "json"));
      assertThat(region.get("results")).hasSize(ROWS);
      for (JsonNode r : region.get("results")) {
        assertThat(r.get("same").get("count").asInt()).as(r.toString()).isZero();
        assertThat(r.get("nearby")).as(r.toString()).isEmpty();
      }
      List<String> regionCsv = empty(note, "region", "--index", i, "--activations", a, "--where", where, "--format", "csv").out().lines().toList();
      assertThat(regionCsv.get(0)).isEqualTo(header("region", "--index", i, "--activations", a, "--format", "csv"));
      for (String[] row : CsvCells.rows(String.join("\n", regionCsv))) assertThat(row[2]).as(String.join(",", row)).isEqualTo("0");

      Path pairs = tmp.resolve("pairs.csv");
      JsonNode joined = json(empty(note, "dupes", "--index", i, "--radius", "1", "--where", where, "--pairs", pairs.toString(), "--format", "json"));
      assertThat(joined.get("summary").get("examples").asInt()).isZero();
      assertThat(joined.get("summary").get("pairs").asLong()).isZero();
      assertThat(joined.get("summary").get("groups").asLong()).isZero();
      assertThat(joined.get("groups")).isEmpty();
      assertThat(Files.readAllLines(pairs)).containsExactly("id_a,id_b,distance");
      assertThat(empty(note, "dupes", "--index", i, "--radius", "1", "--where", where, "--format", "csv").out().lines().toList())
          .containsExactly(header("dupes", "--index", i, "--radius", "8", "--format", "csv"));
      JsonNode against = json(empty(note, "dupes", "--index", i, "--radius", "1", "--against", a, "--where", where, "--format", "json"));
      assertThat(against.get("summary").get("examples").asInt()).isZero();
      assertThat(against.get("summary").get("rows").asInt()).isEqualTo(ROWS);
      assertThat(against.get("summary").get("rows_without").asInt()).isEqualTo(ROWS);
      assertThat(against.get("rows")).isEmpty();
      assertThat(empty(note, "dupes", "--index", i, "--radius", "1", "--against", a, "--where", where, "--format", "csv").out().lines().toList())
          .containsExactly(header("dupes", "--index", i, "--radius", "8", "--against", a, "--format", "csv"));

      JsonNode deleted = json(empty(note, "delete", "--index", i, "--where", where, "--format", "json"));
      assertThat(deleted.get("matched").asInt()).isZero();
      assertThat(deleted.get("deleted").asInt()).isZero();
      assertThat(deleted.get("live").asInt()).isEqualTo(live);
    }
    assertThat(Files2.checksums(idx)).as(Randoms.describe(seed)).isEqualTo(before);
  }

  /** The note is about an empty selection, not about every filter. */
  @Test
  void aFilterThatMatchesSaysNothingOnStderr() {
    String i = idx.toString(), a = acts.toString();
    String[][] matching = {
        {"nearest", "--index", i, "--activations", a, "-k", "3", "--where", "split = train"},
        {"region", "--index", i, "--activations", a, "--where", "split = train"},
        {"dupes", "--index", i, "--radius", "1", "--where", "split = train"},
        {"dupes", "--index", i, "--radius", "1", "--against", a, "--where", "split = train"}};
    for (String[] args : matching) assertThat(ok(Cli.run(args)).err()).as(Randoms.describe(seed)).isEmpty();
  }

  @Test
  void compareRefusesASampleOfFewerThanTwoNamingTheOptionAndTheCount() {
    Map<String, String> before = Files2.checksums(idx);
    String i = idx.toString();
    for (String where : List.of("split = test", "split = \"nowhere\"")) {
      refused(Cli.run("compare", "--index", i, "--a-where", where, "--b-where", "split = train", "--permutations", "5"),
          "--a-where '" + where + "' matches 0 of the " + live + " live examples; sample A needs at least 2");
      refused(Cli.run("compare", "--index", i, "--a-where", "split = train", "--b-where", where, "--permutations", "5"),
          "--b-where '" + where + "' matches 0 of the " + live + " live examples; sample B needs at least 2");
    }
    refused(Cli.run("compare", "--index", i, "--a-where", "key = k1", "--b", acts.toString(), "--permutations", "5"),
        "--a-where 'key = k1' matches 1 of the " + live + " live examples; sample A needs at least 2");
    ok(Cli.run("compare", "--index", i, "--a-where", "key in (k1, k2)", "--b", acts.toString(), "--permutations", "5"));
    assertThat(Files2.checksums(idx)).as(Randoms.describe(seed)).isEqualTo(before);
  }

  /** Exit 0 and exactly one stderr line: the note. */
  private Cli.Result empty(String note, String... args) {
    Cli.Result r = ok(Cli.run(args));
    assertThat(r.err().strip()).as(Randoms.describe(seed) + "\n" + r.describe()).startsWith("note: ").contains(note).doesNotContain("\n");
    return r;
  }

  /** The CSV header of a run that finds something (the same columns whatever the filter). */
  private static String header(String... args) {
    Cli.Result r = ok(Cli.run(args));
    assertThat(r.out().lines().count()).as(r.describe()).isGreaterThan(1);
    return r.out().lines().findFirst().orElseThrow();
  }

  private static void refused(Cli.Result r, String message) {
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err().strip()).as(r.describe()).doesNotContain("\n").doesNotContain("internal error").contains(message);
  }

  private static Cli.Result ok(Cli.Result r) {
    assertThat(r.code()).as(r.describe()).isZero();
    return r;
  }

  private static JsonNode json(Cli.Result r) throws Exception {
    return JsonWriterTest.STRICT.readTree(ok(r).out());
  }
}
