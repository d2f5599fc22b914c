package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * An index that holds no live example (every example deleted, then also compacted to no segment)
 * is not bad input: the commands that have an empty answer give it (exit 0, no rows) with one note
 * on stderr; the commands that cannot answer without examples exit 2 with one line naming the index,
 * never an internal error. The index stays byte-identical throughout.
 */
class EmptyIndexEndToEndTest {
  @TempDir Path tmp;
  static final ObjectMapper JSON = new ObjectMapper();

  @Test
  void commandsAnswerEmptyOrRefuseNamingTheIndex() throws Exception {
    SplittableRandom rnd = new SplittableRandom(11);
    Path idx = tmp.resolve("idx");
    Path acts = Files2.floats(tmp.resolve("acts.npy"), SourcesEndToEndTest.activations(40, 8, rnd));
    Path cal = Files2.floats(tmp.resolve("cal.npy"), SourcesEndToEndTest.activations(40, 8, rnd));
    List<String> meta = new ArrayList<>(List.of("key,label,split"));
    for (int i = 0; i < 40; i++) meta.add("k" + i + "," + (i % 2 == 0 ? "a" : "b") + "," + (i % 3 == 0 ? "test" : "train"));
    Path metaCsv = Files2.text(tmp.resolve("meta.csv"), meta);
    ok(Cli.run("build", "--out", idx.toString(), "--activations", acts.toString(), "--meta", metaCsv.toString()));
    ok(Cli.run("ood", "calibrate", "--index", idx.toString(), "--activations", cal.toString(), "--score", "code"));
    ok(Cli.run("delete", "--index", idx.toString(), "--where", "label in (a, b)"));
    check(idx, acts, cal, "all deleted");
    ok(Cli.run("compact", "--index", idx.toString()));
    check(idx, acts, cal, "compacted to no segment");
  }

  private void check(Path idx, Path acts, Path cal, String state) throws Exception {
    Map<String, String> before = Files2.checksums(idx);
    String i = idx.toString();
    String[][] empty = {
        {"dupes", "--index", i, "--radius", "1"},
        {"dupes", "--index", i, "--radius", "1", "--format", "csv"},
        {"dupes", "--index", i, "--radius", "1", "--against", acts.toString()},
        {"nearest", "--index", i, "--activations", acts.toString(), "-k", "3"},
        {"region", "--index", i, "--activations", acts.toString()},
        {"census", "--index", i},
        {"report", "--index", i, "--out", tmp.resolve("r.html").toString(), "--dupes-radius", "1"}};
    for (String[] args : empty) {
      Cli.Result r = Cli.run(args);
      String why = state + "\n" + r.describe();
      assertThat(r.code()).as(why).isZero();
      // one line, besides report's warning that the index changed since its OOD calibration (every example was deleted since)
      String err = r.err().strip().replaceAll("\n?warning: the index \\S+ changed since 'ood calibrate'[^\n]*", "").strip();
      assertThat(err).as(why).contains(i).contains("no live examples").doesNotContain("\n");
      if (args[0].equals("report")) assertThat(r.err()).as(why).contains("changed since 'ood calibrate' (40 live examples then, 0 now)");
    }
    JsonNode joined = JSON.readTree(Cli.run("dupes", "--index", i, "--radius", "1", "--format", "json").out());
    assertThat(joined.get("summary").get("examples").asInt()).as(state).isZero();
    assertThat(joined.get("summary").get("pairs").asLong()).as(state).isZero();
    assertThat(joined.get("groups")).as(state).isEmpty();
    JsonNode against = JSON.readTree(Cli.run("dupes", "--index", i, "--radius", "1", "--against", acts.toString(), "--format", "json").out());
    assertThat(against.get("summary").get("rows").asLong()).as(state).isEqualTo(40);
    assertThat(against.get("summary").get("rows_without").asLong()).as(state).isEqualTo(40);
    assertThat(against.get("rows")).as(state).isEmpty();
    // no live example: no firing rate (was 0 beside an empty dead list): null in JSON, an empty CSV cell, n/a in the table
    JsonNode census = JSON.readTree(Cli.run("census", "--index", i, "--format", "json").out());
    assertThat(census.get("neurons").get(0).get("firing_rates")).as(state).hasSize(8).allMatch(JsonNode::isNull);
    assertThat(census.get("neurons").get(0).get("dead")).as(state).isEmpty();
    // nor a bound on how often an unseen unit fires: no unit is called dead or always on
    assertThat(census.get("neurons").get(0).get("rate_bound").isNull()).as(state).isTrue();
    assertThat(census.get("neurons").get(0).get("too_few_examples").asBoolean()).as(state).isTrue();
    // and no region: the sizes per region are undefined too (were 0), null in JSON, n/a in the table
    JsonNode prefix = census.get("prefixes").get(0);
    assertThat(prefix.get("regions").asInt()).as(state).isZero();
    assertThat(prefix.get("examples_per_region").properties()).as(state).extracting(Map.Entry::getKey)
        .containsExactly("min", "p50", "p90", "p99", "max", "mean");
    assertThat(prefix.get("examples_per_region")).as(state).allMatch(JsonNode::isNull);
    assertThat(prefix.get("purity").isNull()).as(state).isTrue();
    assertThat(Cli.run("census", "--index", i).out()).as(state).containsPattern("act +8 +0 +0 +n/a +n/a +n/a +n/a *\\n");
    assertThat(Cli.run("census", "--index", i, "--format", "csv").out().lines().skip(1)).as(state).hasSize(8)
        .allMatch(l -> l.matches("act,\\d+,,"));
    assertThat(Cli.run("census", "--index", i).out()).as(state).containsPattern("act +8 +n/a +n/a +n/a");
    // the index had labels, all deleted: the purity table said "no labels"
    assertThat(Files.readString(tmp.resolve("r.html"))).as(state).contains("<td>no live example has a label</td>")
        .doesNotContain("no labels");
    assertThat(Cli.run("dupes", "--index", i, "--radius", "1", "--format", "csv").out().strip()).as(state)
        .isEqualTo("group,size,distinct_codes,max_distance,cross_split,conflicting_labels,labels,splits,keys");

    String[][] impossible = {
        {"ood", "calibrate", "--index", i, "--activations", cal.toString()},
        {"ood", "score", "--index", i, "--activations", acts.toString()},
        {"ood", "score", "--index", i, "--activations", acts.toString(), "--decision-only"},
        {"ood", "eval", "--index", i, "--in", cal.toString(), "--out", acts.toString()},
        {"export-edge", "--index", i, "--out", tmp.resolve("e.bin").toString()},
        {"export-codes", "--index", i, "--out", tmp.resolve("c.npy").toString()},
        {"fidelity", "--index", i},
        {"compare", "--index", i, "--a-where", "label = a", "--b", acts.toString()}};
    for (String[] args : impossible) {
      Cli.Result r = Cli.run(args);
      String why = state + "\n" + r.describe();
      assertThat(r.code()).as(why).isEqualTo(ExitCodes.USAGE);
      assertThat(r.err().strip()).as(why).contains(i).contains("no live examples").doesNotContain("internal error").doesNotContain("\n");
    }
    assertThat(tmp.resolve("e.bin")).doesNotExist();
    assertThat(tmp.resolve("c.npy")).doesNotExist();
    assertThat(Files2.checksums(idx)).as(state).isEqualTo(before);
  }

  /** The decision-only score and the edge bundle with fewer live examples than the calibration's k were an internal error. */
  @Test
  void fewerLiveExamplesThanTheCalibrationsKAreRefused() {
    SplittableRandom rnd = new SplittableRandom(12);
    Path idx = tmp.resolve("few");
    Path acts = Files2.floats(tmp.resolve("acts.npy"), SourcesEndToEndTest.activations(40, 8, rnd));
    Path cal = Files2.floats(tmp.resolve("cal.npy"), SourcesEndToEndTest.activations(40, 8, rnd));
    List<String> keys = new ArrayList<>();
    for (int i = 3; i < 40; i++) keys.add("row-" + i);
    ok(Cli.run("build", "--out", idx.toString(), "--activations", acts.toString()));
    ok(Cli.run("ood", "calibrate", "--index", idx.toString(), "--activations", cal.toString(), "--score", "code", "-k", "5"));
    ok(Cli.run("delete", "--index", idx.toString(), "--keys", Files2.text(tmp.resolve("keys.txt"), keys).toString()));
    Map<String, String> before = Files2.checksums(idx);
    String[][] cases = {
        {"ood", "score", "--index", idx.toString(), "--activations", acts.toString(), "--decision-only"},
        {"export-edge", "--index", idx.toString(), "--out", tmp.resolve("e.bin").toString()}};
    for (String[] args : cases) {
      Cli.Result r = Cli.run(args);
      assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
      // k is the stored calibration's: neither command has an option -k to name
      assertThat(r.err().strip()).as(r.describe()).contains(idx.toString()).contains(": k 5 is larger").contains("3 live examples")
          .doesNotContain("-k 5").doesNotContain("internal error").doesNotContain("\n");
    }
    assertThat(tmp.resolve("e.bin")).doesNotExist();
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  /**
   * A query file of no rows (a hook that never ran, a filter that kept nothing: NumPy writes shape
   * (0, 8)) was answered with nothing at all, not even on stderr.
   * Now one note names the file, as for an index without live examples.
   */
  @Test
  void aQueryFileOfNoRowsGetsANote() {
    SplittableRandom rnd = new SplittableRandom(13);
    Path idx = tmp.resolve("q0");
    Path acts = Files2.floats(tmp.resolve("acts.npy"), SourcesEndToEndTest.activations(40, 8, rnd));
    ok(Cli.run("build", "--out", idx.toString(), "--activations", acts.toString()));
    Path none = Files2.rawNpy(tmp.resolve("none.npy"), Files2.NPY_MAGIC, "{'descr': '<f4', 'fortran_order': False, 'shape': (0, 8), }", new byte[0]);
    Path cal = Files2.floats(tmp.resolve("cal.npy"), SourcesEndToEndTest.activations(30, 8, rnd));
    ok(Cli.run("ood", "calibrate", "--index", idx.toString(), "--activations", cal.toString()));
    for (String[] args : new String[][] {{"nearest", "--index", idx.toString(), "--activations", none.toString()},
        {"region", "--index", idx.toString(), "--activations", none.toString()},
        {"nearest", "--index", idx.toString(), "--activations", none.toString(), "--format", "json"},
        {"ood", "score", "--index", idx.toString(), "--activations", none.toString()},
        {"dupes", "--index", idx.toString(), "--radius", "1", "--against", none.toString(), "--format", "json"}}) {
      Cli.Result r = Cli.run(args);
      assertThat(r.code()).as(r.describe()).isZero();
      assertThat(r.err()).as(r.describe()).contains("note: " + none + " holds no rows; the answer is empty");
    }
    Cli.Result some = Cli.run("nearest", "--index", idx.toString(), "--activations", acts.toString(), "--rows", "0:2");
    assertThat(some.err()).as(some.describe()).doesNotContain("no rows");
    Cli.Result against = Cli.run("dupes", "--index", idx.toString(), "--radius", "1", "--against", acts.toString());
    assertThat(against.err()).as(against.describe()).doesNotContain("no rows");
  }

  private static void ok(Cli.Result r) {
    assertThat(r.code()).as(r.describe()).isZero();
  }
}
