package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

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
 * Options typed where they cannot apply (a mode of the command that never reads them) are refused:
 * exit 2, one line naming the option, every index unchanged and no file written. Each of these
 * command lines ran before with exit 0 and the option silently ignored. The same command line
 * without the option then succeeds, so the refusal is the option's and nothing else's.
 */
class ModeOptionsEndToEndTest {
  @TempDir Path tmp;
  Path idx, codesIdx, plainIdx, acts, queries, codes, queryCodes, calActs, calCodes, farActs, farCodes;

  /** A command line, the option that must be refused and how many values follow it. */
  record Case(String option, int values, String... args) {
    /** The same command line without the option and its values. */
    String[] without() {
      List<String> out = new ArrayList<>(List.of(args));
      int at = out.indexOf(option);
      for (int i = 0; i <= values; i++) out.remove(at);
      return out.toArray(new String[0]);
    }
  }

  @BeforeEach
  void build() {
    SplittableRandom rnd = new SplittableRandom(23);
    float[][] train = SourcesEndToEndTest.activations(150, 12, rnd), q = SourcesEndToEndTest.activations(4, 12, rnd);
    float[][] cal = SourcesEndToEndTest.activations(40, 12, rnd), far = SourcesEndToEndTest.activations(30, 12, rnd);
    for (float[] row : far) for (int j = 0; j < row.length; j++) row[j] = Math.abs(row[j]) + 0.5f; // every unit on
    acts = Files2.floats(tmp.resolve("acts.npy"), train);
    queries = Files2.floats(tmp.resolve("q.npy"), q);
    calActs = Files2.floats(tmp.resolve("cal.npy"), cal);
    farActs = Files2.floats(tmp.resolve("far.npy"), far);
    codes = Files2.bits(tmp.resolve("codes.npy"), SourcesEndToEndTest.binarize(train, 0));
    queryCodes = Files2.bits(tmp.resolve("q-codes.npy"), SourcesEndToEndTest.binarize(q, 0));
    calCodes = Files2.bits(tmp.resolve("cal-codes.npy"), SourcesEndToEndTest.binarize(cal, 0));
    farCodes = Files2.bits(tmp.resolve("far-codes.npy"), SourcesEndToEndTest.binarize(far, 0));
    List<String> lines = new ArrayList<>(List.of("key,label,split"));
    for (int i = 0; i < train.length; i++) lines.add("e" + i + "," + (train[i][0] > 0 ? "hot" : "cold") + "," + (i % 3 == 0 ? "test" : "train"));
    Path meta = Files2.text(tmp.resolve("meta.csv"), lines);
    idx = tmp.resolve("idx");
    codesIdx = tmp.resolve("codes-idx");
    plainIdx = tmp.resolve("plain-idx");
    ok("build", "--out", plainIdx.toString(), "--activations", acts.toString()); // magnitudes, no labels
    ok("build", "--out", idx.toString(), "--activations", acts.toString(), "--meta", meta.toString());
    ok("build", "--out", codesIdx.toString(), "--codes", codes.toString(), "--meta", meta.toString());
    ok("ood", "calibrate", "--index", idx.toString(), "--activations", calActs.toString()); // euclidean, the default: the index keeps magnitudes
    ok("ood", "calibrate", "--index", codesIdx.toString(), "--codes", calCodes.toString()); // code: it keeps none
  }

  private static void ok(String... args) {
    Cli.Result r = Cli.run(args);
    assertThat(r.code()).as(r.describe()).isZero();
  }

  @Test
  void optionsThatCannotApplyAreRefusedNotIgnored() {
    String i = idx.toString(), ci = codesIdx.toString();
    List<Case> cases = List.of(
        new Case("--cross-split", 0, "dupes", "--index", i, "--radius", "2", "--against", queries.toString(), "--cross-split"),
        new Case("--conflicting-labels", 0, "dupes", "--index", i, "--radius", "2", "--against", queries.toString(), "--conflicting-labels"),
        new Case("--groups", 1, "dupes", "--index", i, "--radius", "2", "--against", queries.toString(), "--groups", "3"),
        new Case("--vote-ties", 1, "nearest", "--index", i, "--activations", queries.toString(), "--refine", "cosine", "--vote-ties", "exclude"),
        new Case("--header", 1, "nearest", "--index", i, "--codes", queryCodes.toString(), "--header", "no"),
        new Case("--header", 1, "region", "--index", i, "--codes", queryCodes.toString(), "--header", "yes"),
        new Case("--header", 1, "nearest", "--index", i, "--activations", queries.toString(), "--header", "yes"),
        new Case("--header", 1, "build", "--out", tmp.resolve("b3").toString(), "--activations", acts.toString(), "--header", "no"),
        new Case("--header", 1, "ood", "score", "--index", ci, "--codes", queryCodes.toString(), "--header", "auto"),
        new Case("--header", 1, "build", "--out", tmp.resolve("b1").toString(), "--codes", codes.toString(), "--header", "no"),
        new Case("--threshold", 1, "build", "--out", tmp.resolve("b2").toString(), "--codes", codes.toString(), "--threshold", "0.5"),
        new Case("--magnitudes", 1, "fidelity", "--index", i, "--magnitudes", "4", "--queries", "20"),
        new Case("--magnitudes", 1, "fidelity", "--activations", acts.toString(), "--magnitudes", "4", "--queries", "20"),
        new Case("--candidates", 1, "fidelity", "--activations", acts.toString(), "--candidates", "50", "--queries", "20"),
        new Case("--candidates", 1, "fidelity", "--index", plainIdx.toString(), "--candidates", "50", "--queries", "20"),
        new Case("--largest", 1, "census", "--index", i, "--format", "csv", "--largest", "2"),
        new Case("--examples", 1, "census", "--index", i, "--format", "csv", "--examples", "1"),
        new Case("--candidates", 1, "ood", "calibrate", "--index", ci, "--codes", calCodes.toString(), "--candidates", "50"),
        new Case("--candidates", 1, "ood", "calibrate", "--index", i, "--activations", calActs.toString(), "--score", "code",
            "--candidates", "50"),
        new Case("--evidence", 1, "ood", "score", "--index", ci, "--codes", queryCodes.toString(), "--decision-only", "--evidence", "2"),
        new Case("--evidence", 1, "ood", "score", "--index", ci, "--codes", queryCodes.toString(), "--evidence", "2"), // above the calibration's k = 1
        new Case("--candidates", 1, "ood", "eval", "--index", ci, "--in", calCodes.toString(), "--out", farCodes.toString(), "--kind", "codes",
            "--roc", tmp.resolve("roc.csv").toString(), "--candidates", "50"),
        new Case("--candidates", 1, "ood", "eval", "--index", i, "--in", calActs.toString(), "--out", farActs.toString(), "--kind",
            "activations", "--in-floats", calActs.toString(), "--out-floats", farActs.toString(), "--train-floats", acts.toString(),
            "--roc", tmp.resolve("roc.csv").toString(), "--candidates", "50"),
        new Case("--skip-missing", 0, "delete", "--index", i, "--where", "label = nothing-has-this", "--skip-missing"),
        new Case("--header", 1, "add", "--index", ci, "--codes", queryCodes.toString(), "--header", "no"),
        new Case("--header", 1, "compare", "--a", calActs.toString(), "--b", farActs.toString(), "--permutations", "20", "--header", "no"),
        new Case("--header", 1, "dupes", "--index", i, "--radius", "2", "--against", queries.toString(), "--header", "yes"),
        new Case("--header", 1, "dupes", "--index", i, "--radius", "2", "--header", "yes"),
        new Case("--header", 1, "fidelity", "--index", i, "--queries", "20", "--header", "no"),
        new Case("--header", 1, "ood", "eval", "--index", ci, "--in", calCodes.toString(), "--out", farCodes.toString(), "--kind", "codes",
            "--header", "no"));
    Map<String, String> before = Files2.checksums(idx), codesBefore = Files2.checksums(codesIdx), plainBefore = Files2.checksums(plainIdx);
    for (Case c : cases) {
      Cli.Result r = Cli.run(c.args());
      assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(r.err().strip().lines().count()).as(r.describe()).isEqualTo(1);
      assertThat(r.err()).as(r.describe()).contains(c.option());
      assertThat(r.out()).as(r.describe()).isEmpty();
      assertThat(Files2.checksums(idx)).as(r.describe()).isEqualTo(before);
      assertThat(Files2.checksums(codesIdx)).as(r.describe()).isEqualTo(codesBefore);
      assertThat(Files2.checksums(plainIdx)).as(r.describe()).isEqualTo(plainBefore);
      assertThat(tmp.resolve("b1")).as(r.describe()).doesNotExist();
      assertThat(tmp.resolve("b2")).as(r.describe()).doesNotExist();
      assertThat(tmp.resolve("b3")).as(r.describe()).doesNotExist();
      assertThat(tmp.resolve("roc.csv")).as(r.describe()).doesNotExist();
    }
    for (Case c : cases) ok(c.without()); // after the refusals: some of these change an index (add, calibrate)
    assertThat(Files.exists(tmp.resolve("roc.csv"))).isTrue();
  }

  /** The reasons say what the option is about, so a user knows what to drop or change. */
  @Test
  void refusalsSayWhy() {
    Cli.Result dupes = Cli.run("dupes", "--index", idx.toString(), "--radius", "2", "--against", queries.toString(), "--cross-split");
    assertThat(dupes.err()).contains("--cross-split").contains("--against").contains("groups");
    Cli.Result calibrate = Cli.run("ood", "calibrate", "--index", codesIdx.toString(), "--codes", calCodes.toString(), "--candidates", "50");
    assertThat(calibrate.err()).contains("--candidates").contains("code score").contains("keeps no magnitudes");
    Cli.Result eval = Cli.run("ood", "eval", "--index", idx.toString(), "--in", calActs.toString(), "--out", farActs.toString(),
        "--kind", "activations", "--in-floats", calActs.toString(), "--out-floats", farActs.toString(), "--train-floats", acts.toString(),
        "--candidates", "50");
    assertThat(eval.err()).contains("--candidates").contains("euclidean calibration").contains("100 candidates");
    Cli.Result evalNoFloats = Cli.run("ood", "eval", "--index", codesIdx.toString(), "--in", calCodes.toString(), "--out", farCodes.toString(),
        "--kind", "codes", "--candidates", "50");
    assertThat(evalNoFloats.err()).contains("--candidates").contains("--train-floats");
    Cli.Result evidence = Cli.run("ood", "score", "--index", codesIdx.toString(), "--codes", queryCodes.toString(), "--evidence", "2");
    assertThat(evidence.err()).contains("--evidence 2").contains("-k 1").contains("ood calibrate");
    Cli.Result evidenceAtK = Cli.run("ood", "score", "--index", codesIdx.toString(), "--codes", queryCodes.toString(), "--evidence", "1",
        "--format", "json");
    assertThat(evidenceAtK.code()).as(evidenceAtK.describe()).isZero();
    assertThat(evidenceAtK.out()).contains("\"evidence\":[{");
  }
}
