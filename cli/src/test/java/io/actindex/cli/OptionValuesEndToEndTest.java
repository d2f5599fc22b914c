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
import java.util.stream.Stream;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Option values a user who mistypes would give, found by tools/audit/option_values.py: each one
 * either refused (exit 2, one line naming the option and the value, nothing on stdout, the index
 * byte-identical) or, where it is a spelling every other command takes, accepted.
 */
class OptionValuesEndToEndTest {
  static final int ROWS = 60, UNITS = 8;
  @TempDir Path tmp;
  Path idx, acts, acts2;
  String i, a;
  long seed;

  @BeforeEach
  void buildIndex() throws Exception {
    seed = Randoms.seed(611);
    SplittableRandom rnd = new SplittableRandom(seed);
    idx = tmp.resolve("idx");
    acts = Files2.floats(tmp.resolve("acts.npy"), SourcesEndToEndTest.activations(ROWS, UNITS, rnd));
    acts2 = Files2.floats(tmp.resolve("acts2.npy"), SourcesEndToEndTest.activations(ROWS, UNITS, rnd));
    List<String> meta = new ArrayList<>(List.of("key,label,split"));
    for (int r = 0; r < ROWS; r++) meta.add("k" + r + "," + (r % 2 == 0 ? "a" : "b") + "," + (r % 3 == 0 ? "test" : "train"));
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--activations", acts.toString(), "--meta",
        Files2.text(tmp.resolve("m.csv"), meta).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    i = idx.toString();
    a = acts.toString();
  }

  /** Exit 2, one line on stderr holding every piece of {@code mention}, no stack trace, nothing on stdout, the index unchanged. */
  private Cli.Result refused(String[] args, String... mention) {
    Map<String, String> before = Files2.checksums(idx);
    Cli.Result r = Cli.run(args);
    String what = Randoms.describe(seed) + "\n" + r.describe();
    assertThat(r.code()).as(what).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err().strip()).as(what).doesNotContain("\n").doesNotContain("\tat ");
    for (String m : mention) assertThat(r.err()).as(what).contains(m);
    assertThat(r.out()).as(what).isEmpty();
    assertThat(Files2.checksums(idx)).as(what + ": index unchanged").isEqualTo(before);
    return r;
  }

  private Cli.Result ok(String... args) {
    Cli.Result r = Cli.run(args);
    assertThat(r.code()).as(Randoms.describe(seed) + "\n" + r.describe()).isZero();
    return r;
  }

  private static String[] args(String... a) {
    return a;
  }

  /** {@code 0:-1} read as "to the end" answered every row; an empty value did too; messages name --rows. */
  @Test
  void rowsWithANegativeEndOrNoValueAreRefusedNamingTheOption() {
    for (String cmd : List.of("nearest", "region")) {
      refused(args(cmd, "--index", i, "--activations", a, "--rows", "0:-1"), "--rows: end -1 is negative");
      refused(args(cmd, "--index", i, "--activations", a, "--rows", "3:-2"), "--rows: end -2 is negative");
      refused(args(cmd, "--index", i, "--activations", a, "--rows", ""), "--rows: the range is empty");
      refused(args(cmd, "--index", i, "--activations", a, "--rows", "-1"), "--rows: start -1 is negative");
      refused(args(cmd, "--index", i, "--activations", a, "--rows", "x"), "--rows: 'x' is not A:B");
    }
    JsonNode open = json(ok("nearest", "--index", i, "--activations", a, "-k", "1", "--rows", "57:", "--format", "json"));
    assertThat(open.get("results")).as("57: is the last three rows").hasSize(3);
    assertThat(open.get("results").get(0).get("query").asInt()).isEqualTo(57);
  }

  /**
   * A --rows that selects too few rows for a calibration was refused without naming the option
   * ("acts.npy: 1 calibration input; a target rate of 0.95 needs at least 19"); one past the file's end
   * named neither ("rows 70:71 asked"); one that selects none was noted as a file holding no rows.
   * The need, 19 inputs at --tpr 0.95 and 99 at 0.99, is ceil(tpr (n + 1)) <= n (split conformal
   * rank; Vovk, Gammerman &amp; Shafer 2005, "Algorithmic Learning in a Random World", section 2.2).
   */
  @Test
  void rowsThatSelectTooFewOrNoneAreNamed() {
    String[] calibrate = {"ood", "calibrate", "--index", i, "--activations", acts2.toString(), "--score", "code"};
    refused(with(List.of(calibrate), "--rows", "0:1"), "acts2.npy: --rows 0:1 selects 1 calibration input;", "(--tpr) of 0.95 needs at least 19",
        "select more rows, or leave --rows out");
    refused(with(List.of(calibrate), "--rows", "42:"), "--rows 42: selects 18 calibration inputs", "needs at least 19");
    refused(with(List.of(calibrate), "--rows", "30:48", "--tpr", "0.95"), "--rows 30:48 selects 18 calibration inputs", "at least 19");
    refused(with(List.of(calibrate), "--tpr", "0.99"), "acts2.npy: 60 calibration inputs; a target rate (--tpr) of 0.99 needs at least 99");
    ok(with(List.of(calibrate), "--rows", "41:")); // 19 rows
    for (String cmd : List.of("nearest", "region")) {
      refused(args(cmd, "--index", i, "--activations", a, "--rows", "70:71"), "acts.npy: --rows 70:71 asked, the file has 60 rows");
      assertThat(notes(ok(cmd, "--index", i, "--activations", a, "--rows", "5:5"))).containsExactly(
          "note: --rows 5:5 selects no row of " + a + "; the answer is empty");
    }
    refused(args("ood", "score", "--index", i, "--activations", a, "--rows", "60"), "--rows 60:61 asked, the file has 60 rows");
    assertThat(notes(ok("ood", "score", "--index", i, "--activations", a, "--rows", "5:5"))).contains(
        "note: --rows 5:5 selects no row of " + a + "; the answer is empty");
  }

  /** region took any radius above the code length (as the code length); dupes refused it: now both refuse it. */
  @Test
  void regionRefusesARadiusAboveTheCodeLengthLikeDupes() {
    for (String cmd : List.of("region", "dupes")) {
      List<String> base = new ArrayList<>(List.of(cmd, "--index", i));
      if (cmd.equals("region")) base.addAll(List.of("--activations", a, "--rows", "0:2"));
      for (String radius : List.of(Integer.toString(UNITS + 1), "2147483647")) {
        List<String> line = new ArrayList<>(base);
        line.addAll(List.of("--radius", radius));
        refused(line.toArray(String[]::new), "--radius " + radius + " is larger than the code length, " + UNITS + " bits");
      }
      List<String> line = new ArrayList<>(base);
      line.addAll(List.of("--radius", Integer.toString(UNITS)));
      ok(line.toArray(String[]::new));
    }
  }

  /** --format, --kind, --vote-ties, --refine and --magnitudes take any case; ood's --score and --statistic refused CODE and MEAN. */
  @Test
  void oodScoreAndStatisticTakeAnyCaseLikeEveryOtherChoice() {
    JsonNode cal = json(ok("ood", "calibrate", "--index", i, "--activations", acts2.toString(), "--score", "CODE",
        "--statistic", "Mean", "-k", "2", "--format", "json"));
    assertThat(cal.get("statistic").asText()).isEqualTo("mean");
    assertThat(cal.get("score").asText()).isEqualTo("code");
    JsonNode score = json(ok("ood", "score", "--index", i, "--activations", a, "--rows", "0:2", "--score", "Code", "--format", "json"));
    assertThat(score.get("results")).hasSize(2);
    refused(args("ood", "score", "--index", i, "--activations", a, "--score", "cosine"), "--score: unknown score 'cosine'");
    refused(args("ood", "calibrate", "--index", i, "--activations", acts2.toString(), "--statistic", "median"),
        "--statistic: unknown statistic 'median'");
  }

  /** A Sinkhorn tolerance of 2 or more (Infinity included) is met by the first iteration, and the run reported as converged. */
  @Test
  void compareRefusesASinkhornToleranceThatAnyPlanMeets() {
    List<String> base = List.of("compare", "--kind", "activations", "--a", a, "--b", acts2.toString(), "--permutations", "20",
        "--exact-max", "0");
    for (String tol : List.of("2", "1e300", "Infinity", "1e400", "0", "NaN")) {
      List<String> line = new ArrayList<>(base);
      line.addAll(List.of("--tol", tol));
      refused(line.toArray(String[]::new), "--tol must be above 0 and below 2");
    }
    List<String> line = new ArrayList<>(base);
    line.addAll(List.of("--tol", "1.5", "--format", "json"));
    assertThat(json(ok(line.toArray(String[]::new))).toString()).contains("sinkhorn");
  }

  /**
   * With P permutations no permutation p-value is below 1/(P+1) (Phipson and Smyth's (b+1)/(P+1)):
   * --permutations 1 answered "no difference detected" for any samples, without a word. A note
   * names the least P that can reach the level each of the two tests is held to (alpha / 2).
   */
  @Test
  void compareNotesTooFewPermutationsToReject() {
    String[][] cases = {{"0.05", "38", "39"}, {"0.01", "198", "199"}, {"0.05", "1", "39"}};
    for (String[] c : cases) {
      String alpha = c[0], few = c[1], enough = c[2];
      JsonNode r = json(ok("compare", "--kind", "activations", "--a", a, "--b", acts2.toString(), "--alpha", alpha,
          "--permutations", few, "--format", "json"));
      assertThat(r.get("notes").toString()).as(alpha + " " + few).contains("with " + few + " permutations (--permutations) no MMD p-value")
          .contains("give at least " + enough);
      r = json(ok("compare", "--kind", "activations", "--a", a, "--b", acts2.toString(), "--alpha", alpha,
          "--permutations", enough, "--format", "json"));
      assertThat(r.get("notes").toString()).as(alpha + " " + enough).doesNotContain("--permutations");
    }
  }

  /** "--largest and --examples must be 0 or more" named neither the one given nor its value. */
  @Test
  void censusNamesWhichCountIsNegative() {
    Cli.Result r = refused(args("census", "--index", i, "--largest", "-2"), "--largest must be 0 or more, got -2");
    assertThat(r.err()).doesNotContain("--examples");
    r = refused(args("census", "--index", i, "--examples", "-7"), "--examples must be 0 or more, got -7");
    assertThat(r.err()).doesNotContain("--largest");
  }

  /** A folder as calibrate-planner's file was refused only after the measuring, with a temporary file's name. */
  @Test
  void calibratePlannerRefusesAFolderBeforeMeasuring() throws Exception {
    Path folder = Files.createDirectory(tmp.resolve("costs"));
    Cli.Result r = refused(args("calibrate-planner", "--out", folder.toString(), "--runs", "1"), folder + ": is a folder");
    assertThat(r.err()).doesNotContain(".tmp");
    try (var s = Files.list(folder)) {
      assertThat(s.toList()).isEmpty();
    }
    try (var s = Files.list(tmp)) {
      assertThat(s.map(p -> p.getFileName().toString()).toList()).noneMatch(n -> n.endsWith(".tmp"));
    }
  }

  /** A path of spaces ("$DIR " with DIR unset) is refused like an empty one; build --out " " built an index in a folder " ". */
  @Test
  void aBlankPathIsRefusedNamingItsOption() {
    refused(args("build", "--out", " ", "--activations", a), "--out", "blank");
    refused(args("nearest", "--index", i, "--activations", "  "), "--activations", "blank");
    refused(args("info", "--index", " "), "--index", "blank");
    assertThat(Path.of(" ")).doesNotExist();
  }

  /** A --where syntax error is named by its option; compare said "where:" for either of its two filters. */
  @Test
  void aWhereSyntaxErrorNamesItsOption() {
    refused(args("nearest", "--index", i, "--activations", a, "--where", "label = 'a"), "--where: at position 9: quote never closed");
    refused(args("delete", "--index", i, "--where", "split = "), "--where: at position 9: expected a value");
    refused(args("compare", "--index", i, "--a-where", "split = train", "--b-where", "label ~ a", "--permutations", "20"),
        "--b-where: at position 7");
    Cli.Result r = refused(args("compare", "--index", i, "--a-where", "nosuch = 1", "--b-where", "split = test", "--permutations", "20"),
        "--a-where: at position 1: unknown field 'nosuch'");
    assertThat(r.err()).doesNotContain("--b-where");
  }

  /** "a:4,b:4," built (a trailing comma was dropped) while ",a:4,b:4" and --layers "0," are refused. */
  @Test
  void aCodeLayoutWithATrailingCommaIsRefused() {
    boolean[][] bits = new boolean[6][UNITS];
    for (int r = 0; r < bits.length; r++) bits[r][r % UNITS] = true;
    String codes = Files2.bits(tmp.resolve("codes.npy"), bits).toString();
    List<String> layouts = List.of("a:4,b:4,", ",a:4,b:4", "a:4,,b:4");
    for (int n = 0; n < layouts.size(); n++) {
      String layout = layouts.get(n), out = tmp.resolve("bad-" + n).toString();
      refused(args("build", "--out", out, "--codes", codes, "--code-layout", layout), "--code-layout", "layout segment '' is not name:bits");
      assertThat(Path.of(out)).doesNotExist();
    }
    ok("build", "--out", tmp.resolve("good").toString(), "--codes", codes, "--code-layout", "a:4,b:4");
  }

  /** delete's --where given twice read "expected only one match but got (--keys=FILE | --where=EXPR)={...}" (a picocli group). */
  @Test
  void deleteSaysWhichOptionIsRepeatedOrMissing() throws Exception {
    String keys = Files2.text(tmp.resolve("keys.txt"), List.of("k1")).toString();
    refused(args("delete", "--index", i, "--where", "split = test", "--where", "split = test"),
        "option '--where' (EXPR) should be specified only once");
    refused(args("delete", "--index", i, "--keys", keys, "--keys", keys), "option '--keys' (FILE) should be specified only once");
    refused(args("delete", "--index", i, "--keys", keys, "--where", "split = test"), "--keys FILE or --where EXPR (one of them)");
    refused(args("delete", "--index", i), "--keys FILE or --where EXPR (one of them)");
    JsonNode d = json(ok("delete", "--index", i, "--keys", keys, "--format", "json"));
    assertThat(d.get("deleted").asInt()).isEqualTo(1);
  }

  /** report --title "" wrote a page with an empty heading and an empty tab title. */
  @Test
  void reportRefusesABlankTitle() throws Exception {
    Path page = tmp.resolve("r.html");
    for (String title : List.of("", "  ")) {
      refused(args("report", "--index", i, "--out", page.toString(), "--title", title), "--title is empty");
      assertThat(page).doesNotExist();
    }
    ok("report", "--index", i, "--out", page.toString(), "--title", "Week 48");
    assertThat(Files.readString(page)).contains("<h1>Week 48</h1>");
  }

  /**
   * Whole-number options refused {@code -k ' 3'} ("' 3' is not an int") where decimal options took
   * {@code --tol ' 0.5'}: they take spaces around the number too, and refuse what is still not a whole
   * number in picocli's words, as before.
   */
  @Test
  void wholeNumbersTakeSpacesAroundThemLikeDecimals() {
    String plain = ok("nearest", "--index", i, "--activations", a, "--rows", "0:5", "-k", "3", "--threads", "2", "--format", "csv").out();
    for (String k : List.of(" 3", "3 ", "\t3\n"))
      assertThat(ok("nearest", "--index", i, "--activations", a, "--rows", "0:5", "-k", k, "--threads", " 2 ", "--format", "csv").out())
          .as("-k '%s'", k).isEqualTo(plain);
    List<String> compare = List.of("compare", "--kind", "activations", "--a", a, "--b", acts2.toString(), "--format", "json");
    JsonNode seeded = json(ok(Stream.concat(compare.stream(), Stream.of("--seed", "7", "--permutations", "20")).toArray(String[]::new)));
    JsonNode spaced = json(ok(Stream.concat(compare.stream(), Stream.of("--seed", " 7 ", "--permutations", " 20")).toArray(String[]::new)));
    assertThat(spaced).isEqualTo(seeded);
    for (String bad : List.of("3x", " ", "", "0x3", "3 4", "99999999999"))
      refused(args("nearest", "--index", i, "--activations", a, "-k", bad), "Invalid value for option '-k': '" + bad + "' is not an int");
    refused(Stream.concat(compare.stream(), Stream.of("--seed", " x")).toArray(String[]::new),
        "Invalid value for option '--seed': ' x' is not a long");
    refused(args("nearest", "--index", i, "--activations", a, "-k", " 0"), "-k must be at least 1, got 0");
  }

  /**
   * nearest -k above the live examples listed them all without a word, as if the search had found no
   * more: one note says how many there are (those --where matches, with a filter); the output is the
   * one -k of that count gives.
   */
  @Test
  void nearestNotesAKAboveTheLiveExamples() throws Exception {
    List<String> q = List.of("nearest", "--index", i, "--activations", a, "--rows", "0:4");
    Cli.Result above = ok(with(q, "-k", Integer.toString(ROWS + 5), "--format", "csv"));
    Cli.Result exact = ok(with(q, "-k", Integer.toString(ROWS), "--format", "csv"));
    assertThat(above.out()).isEqualTo(exact.out());
    assertThat(notes(exact)).isEmpty();
    assertThat(notes(above)).containsExactly("note: -k " + (ROWS + 5) + " is more than the " + ROWS
        + " live examples in the index; each answer lists all " + ROWS);
    int tests = (ROWS + 2) / 3; // split = test: rows 0, 3, 6, ...
    Cli.Result filtered = ok(with(q, "-k", Integer.toString(tests + 1), "--where", "split = test", "--format", "json"));
    assertThat(notes(filtered)).containsExactly("note: -k " + (tests + 1) + " is more than the " + tests
        + " live examples --where 'split = test' matches; each answer lists all " + tests);
    for (JsonNode r : json(filtered).get("results")) assertThat(r.get("neighbors")).hasSize(tests);
    assertThat(notes(ok(with(q, "-k", Integer.toString(tests), "--where", "split = test")))).isEmpty();
    assertThat(notes(ok(with(q, "-k", "2", "--where", "key = k5", "--ties"))))
        .containsExactly("note: -k 2 is more than the 1 live example --where 'key = k5' matches; each answer lists it");
    assertThat(notes(ok(with(q, "-k", "2", "--where", "key = nosuch")))).containsExactly(
        "note: --where 'key = nosuch' matches no live example (of the " + ROWS + " in the index)");
    ok("delete", "--index", i, "--where", "split = test");
    Cli.Result deleted = ok(with(q, "-k", Integer.toString(ROWS), "--format", "json"));
    assertThat(notes(deleted)).containsExactly("note: -k " + ROWS + " is more than the " + (ROWS - tests)
        + " live examples in the index; each answer lists all " + (ROWS - tests));
    for (JsonNode r : json(deleted).get("results")) assertThat(r.get("neighbors")).hasSize(ROWS - tests);
  }

  private static String[] with(List<String> line, String... more) {
    return Stream.concat(line.stream(), Stream.of(more)).toArray(String[]::new);
  }

  private static List<String> notes(Cli.Result r) {
    return r.err().lines().filter(l -> l.startsWith("note:")).toList();
  }

  private JsonNode json(Cli.Result r) {
    try {
      return JsonWriterTest.STRICT.readTree(r.out());
    } catch (Exception e) {
      throw new AssertionError(r.describe(), e);
    }
  }
}
