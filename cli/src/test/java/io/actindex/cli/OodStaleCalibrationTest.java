package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import io.actindex.query.report.HtmlPage;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The stored OOD calibration records the live examples it was made on; {@code ood score} (also
 * {@code --decision-only}), {@code ood eval}, {@code report} and {@code export-edge} warn when they
 * changed ({@code add}, {@code delete}) and stay silent after {@code compact}, which leaves every
 * score as it was. They never refuse a changed index; a damaged record is refused as a damaged
 * calibration; an older calibration without the record gets a note that it cannot tell.
 */
class OodStaleCalibrationTest {
  @TempDir Path tmp;

  private static final String CHANGED = "warning: the index ";

  private static Cli.Result ok(String... args) {
    Cli.Result r = Cli.run(args);
    assertThat(r.code()).as(r.describe()).isZero();
    return r;
  }

  private static String attachment(Path idx) {
    try (IndexReader r = IndexReader.open(idx)) {
      return new String(r.attachment("ood.calibration"), StandardCharsets.UTF_8);
    }
  }

  private static void store(Path idx, String calibration) {
    try (IndexWriter w = IndexWriter.open(idx)) {
      w.putAttachment("ood.calibration", calibration.getBytes(StandardCharsets.UTF_8));
    }
  }

  private Path keys(String name, int from, int to) {
    List<String> lines = new ArrayList<>();
    for (int i = from; i < to; i++) lines.add("row-" + i);
    return Files2.text(tmp.resolve(name), lines);
  }

  /** Every command that uses the stored calibration, with its stderr and (where it has calibration numbers) the JSON {@code index_changed}. */
  private List<Cli.Result> everyUse(Path idx, Path q, Path q2) {
    return List.of(
        Cli.run("ood", "score", "--index", idx.toString(), "--codes", q.toString(), "--format", "json"),
        Cli.run("ood", "score", "--index", idx.toString(), "--codes", q.toString(), "--decision-only", "--format", "json"),
        Cli.run("ood", "eval", "--index", idx.toString(), "--in", q.toString(), "--out", q2.toString(), "--kind", "codes", "--format", "json"),
        Cli.run("export-edge", "--index", idx.toString(), "--out", tmp.resolve("b.edge").toString()),
        Cli.run("report", "--index", idx.toString(), "--out", tmp.resolve("r.html").toString()));
  }

  private void expect(List<Cli.Result> runs, Boolean changed, String stderr) throws Exception {
    for (Cli.Result r : runs) {
      assertThat(r.code()).as(r.describe()).isZero();
      if (stderr == null) assertThat(r.err()).as(r.describe()).doesNotContain("warning:").doesNotContain("live examples");
      else assertThat(r.err().split(java.util.regex.Pattern.quote(stderr), -1)).as(r.describe() + ": said once").hasSize(2);
    }
    for (Cli.Result r : runs.subList(0, 3)) {
      JsonNode j = OodEndToEndTest.JSON.readTree(r.out());
      List<String> names = new ArrayList<>();
      j.fieldNames().forEachRemaining(names::add);
      assertThat(names.getLast()).as(r.describe()).isEqualTo("index_changed"); // a new field, at the end
      if (changed == null) assertThat(j.get("index_changed").isNull()).as(r.describe()).isTrue();
      else assertThat(j.get("index_changed").asBoolean()).as(r.describe()).isEqualTo(changed);
    }
    String page = Files.readString(tmp.resolve("r.html"));
    if (stderr == null) assertThat(page).doesNotContain("changed since").doesNotContain("cannot be detected");
    else assertThat(page).contains(HtmlPage.esc(stderr.replaceFirst("^(warning|note): ", "")));
  }

  @Test
  void deleteAndAddWarnEveryUseWhileUndoingTheAddDoesNot() throws Exception {
    boolean[][] train = OodEndToEndTest.rows(400, 0.05, 1);
    Path idx = tmp.resolve("idx");
    Path trainF = Files2.bits(tmp.resolve("train.npy"), train);
    Path calF = Files2.bits(tmp.resolve("cal.npy"), OodEndToEndTest.rows(60, 0.05, 2));
    Path q = Files2.bits(tmp.resolve("q.npy"), OodEndToEndTest.rows(30, 0.05, 3)), q2 = Files2.bits(tmp.resolve("q2.npy"), OodEndToEndTest.rows(30, 0.3, 4));
    ok("build", "--out", idx.toString(), "--codes", trainF.toString());
    ok("ood", "calibrate", "--index", idx.toString(), "--codes", calF.toString(), "-k", "2", "--tpr", "0.9");
    assertThat(attachment(idx)).contains("\nlive=400\n").containsPattern("\nlive_ids=[0-9a-f]{16}\n");
    expect(everyUse(idx, q, q2), false, null);

    ok("delete", "--index", idx.toString(), "--keys", keys("gone.txt", 0, 100).toString());
    expect(everyUse(idx, q, q2), true, CHANGED + idx + " changed since 'ood calibrate' (400 live examples then, 300 now): the stored threshold"
        + " may no longer flag about 10% of in-distribution inputs");
    // the same count, other examples: told apart by the ids
    ok("add", "--index", idx.toString(), "--codes", Files2.bits(tmp.resolve("more.npy"), OodEndToEndTest.rows(100, 0.05, 5)).toString());
    expect(everyUse(idx, q, q2), true, "(400 live examples then, 400 now, not the same ones)");
  }

  @Test
  void addWarnsAndDeletingWhatWasAddedRestoresTheLiveSet() throws Exception {
    Path idx = tmp.resolve("idx");
    Path q = Files2.bits(tmp.resolve("q.npy"), OodEndToEndTest.rows(30, 0.05, 3)), q2 = Files2.bits(tmp.resolve("q2.npy"), OodEndToEndTest.rows(30, 0.3, 4));
    ok("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("train.npy"), OodEndToEndTest.rows(200, 0.05, 1)).toString());
    ok("ood", "calibrate", "--index", idx.toString(), "--codes", Files2.bits(tmp.resolve("cal.npy"), OodEndToEndTest.rows(40, 0.05, 2)).toString());
    ok("add", "--index", idx.toString(), "--codes", Files2.bits(tmp.resolve("more.npy"), OodEndToEndTest.rows(7, 0.05, 5)).toString());
    expect(everyUse(idx, q, q2), true, "(200 live examples then, 207 now)");
    ok("delete", "--index", idx.toString(), "--keys", keys("added.txt", 200, 207).toString());
    expect(everyUse(idx, q, q2), false, null); // the same examples as at calibration, so the same scores
  }

  /** Compact keeps ids and kept magnitudes: the scores on them (the default euclidean) are the same before and after, and nothing is said. */
  @Test
  void compactLeavesScoresAndSaysNothing() throws Exception {
    Path idx = tmp.resolve("fidx");
    Path trainF = Files2.floats(tmp.resolve("ftrain.npy"), OodEndToEndTest.floats(300, 0.1, 1));
    Path calF = Files2.floats(tmp.resolve("fcal.npy"), OodEndToEndTest.floats(60, 0.1, 2));
    Path qF = Files2.floats(tmp.resolve("fq.npy"), OodEndToEndTest.floats(40, 0.3, 3));
    ok("build", "--out", idx.toString(), "--activations", trainF.toString());
    // 70 of 300: below the share at which the delete itself would rewrite the segment
    ok("delete", "--index", idx.toString(), "--keys", keys("gone.txt", 10, 80).toString());
    ok("ood", "calibrate", "--index", idx.toString(), "--activations", calF.toString(), "-k", "3");
    assertThat(attachment(idx)).contains("score=euclidean\n").contains("\nlive=230\n");
    String[] score = {"ood", "score", "--index", idx.toString(), "--activations", qF.toString(), "--evidence", "3", "--format", "json"};
    Cli.Result before = ok(score);
    Map<String, String> files = Files2.checksums(idx);
    ok("compact", "--index", idx.toString());
    assertThat(Files2.checksums(idx)).as("compact rewrote the segments").isNotEqualTo(files);
    Cli.Result after = ok(score);
    assertThat(after.out()).isEqualTo(before.out());
    assertThat(after.err()).isEqualTo(before.err()).doesNotContain("warning:");
    assertThat(OodEndToEndTest.JSON.readTree(after.out()).get("index_changed").asBoolean()).isFalse();
  }

  @Test
  void anOlderCalibrationWithoutTheRecordGetsANoteAndIsUsed() throws Exception {
    Path idx = tmp.resolve("idx");
    Path q = Files2.bits(tmp.resolve("q.npy"), OodEndToEndTest.rows(30, 0.05, 3)), q2 = Files2.bits(tmp.resolve("q2.npy"), OodEndToEndTest.rows(30, 0.3, 4));
    ok("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("train.npy"), OodEndToEndTest.rows(200, 0.05, 1)).toString());
    ok("ood", "calibrate", "--index", idx.toString(), "--codes", Files2.bits(tmp.resolve("cal.npy"), OodEndToEndTest.rows(40, 0.05, 2)).toString());
    String stored = attachment(idx);
    Cli.Result recorded = ok("ood", "score", "--index", idx.toString(), "--codes", q.toString(), "--format", "json");
    String old = stored.replaceAll("live=\\d+\n", "").replaceAll("live_ids=[0-9a-f]+\n", "");
    assertThat(old).isNotEqualTo(stored).doesNotContain("live");
    store(idx, old);
    List<Cli.Result> runs = everyUse(idx, q, q2);
    expect(runs, null, "note: the OOD calibration stored in " + idx + " does not record which examples were live");
    // the same results as with the record: the calibration is used as it is
    JsonNode a = OodEndToEndTest.JSON.readTree(recorded.out()), b = OodEndToEndTest.JSON.readTree(runs.getFirst().out());
    assertThat(b.get("results")).isEqualTo(a.get("results"));
    assertThat(b.get("threshold")).isEqualTo(a.get("threshold"));
  }

  @Test
  void aDamagedRecordIsRefusedAsADamagedCalibration() throws Exception {
    Path idx = tmp.resolve("idx");
    Path q = Files2.bits(tmp.resolve("q.npy"), OodEndToEndTest.rows(30, 0.05, 3)), q2 = Files2.bits(tmp.resolve("q2.npy"), OodEndToEndTest.rows(30, 0.3, 4));
    ok("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("train.npy"), OodEndToEndTest.rows(200, 0.05, 1)).toString());
    ok("ood", "calibrate", "--index", idx.toString(), "--codes", Files2.bits(tmp.resolve("cal.npy"), OodEndToEndTest.rows(40, 0.05, 2)).toString());
    String stored = attachment(idx);
    String[][] damages = {{"live=200\n", "live=two hundred\n", "field live: 'two hundred' is not a whole number"},
        {"live=200\n", "live=-5\n", "field live: -5 is below 0"}, {"live=200\n", "", "field live missing"},
        {"live_ids=", "live_ids=zz", "field live_ids: 'zz"}, {"live_ids=", "lives=", "field live_ids missing"}};
    for (String[] d : damages) {
      assertThat(stored).contains(d[0]);
      store(idx, stored.replace(d[0], d[1]));
      Map<String, String> files = Files2.checksums(idx);
      for (Cli.Result r : everyUse(idx, q, q2)) {
        assertThat(r.code()).as(r.describe()).isEqualTo(2);
        assertThat(r.err()).as(r.describe()).contains(idx + " attachment ood.calibration: damaged calibration: " + d[2]);
        assertThat(r.err().strip().lines().count()).as(r.describe()).isEqualTo(1);
      }
      assertThat(Files2.checksums(idx)).isEqualTo(files);
    }
  }
}
