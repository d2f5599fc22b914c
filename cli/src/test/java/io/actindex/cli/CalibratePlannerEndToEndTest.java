package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.format.JsonWriterTest;
import io.actindex.index.mih.PlannerCalibration;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.AfterEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code calibrate-planner}: writes the machine's costs where asked (or nowhere with --dry-run),
 * refuses bad options and unwritable places with exit 2, and a damaged calibration file makes a
 * query exit 2 naming it, while a sound one leaves the answers those of a bit-by-bit scan.
 */
class CalibratePlannerEndToEndTest {
  @TempDir Path tmp;

  @AfterEach
  void forget() {
    System.clearProperty(PlannerCalibration.PROPERTY);
  }

  @Test
  void writesTheCostsAndQueriesPlanWithThem() throws Exception {
    Path file = tmp.resolve("conf/costs.properties");
    // what an earlier version killed before its rename left (Files.createTempFile's name), old and unlocked
    Files.createDirectories(file.getParent());
    Path leftover = Files.createTempFile(file.getParent(), "costs.properties", ".tmp"), young = Files.createTempFile(file.getParent(), "costs.properties", ".tmp");
    Files.setLastModifiedTime(leftover, java.nio.file.attribute.FileTime.from(java.time.Instant.now().minus(java.time.Duration.ofHours(1))));
    Cli.Result r = Cli.run("calibrate-planner", "--runs", "1", "--out", file.toString(), "--format", "json");
    assertThat(r.code()).as(r.describe()).isZero();
    JsonNode doc = JsonWriterTest.STRICT.readTree(r.out());
    assertThat(doc.get("written").asBoolean()).isTrue();
    assertThat(doc.get("file").asText()).isEqualTo(file.toString());
    assertThat(doc.get("costs").size()).isEqualTo(8);
    for (JsonNode c : doc.get("costs")) assertThat(c.get("ns").asDouble()).as(c.toString()).isPositive();
    List<String> lines = Files.readAllLines(file);
    assertThat(lines).contains("format=1");
    assertThat(lines.stream().filter(l -> !l.startsWith("format=") && l.matches("[a-z-]+=[0-9.e+-]+")).count()).isEqualTo(8);
    assertThat(leftover).as("an old leftover of an earlier version").doesNotExist();
    assertThat(young).as("a young one: maybe a writer of an earlier version still at work").exists();

    Path dry = tmp.resolve("dry.properties"); // the file a dry run would write: the machine's, given by the property
    System.setProperty(PlannerCalibration.PROPERTY, dry.toString());
    Cli.Result d = Cli.run("calibrate-planner", "--runs", "1", "--dry-run", "--format", "json");
    assertThat(d.code()).as(d.describe()).isZero();
    JsonNode dryDoc = JsonWriterTest.STRICT.readTree(d.out());
    assertThat(dryDoc.get("written").asBoolean()).isFalse();
    assertThat(dryDoc.get("file").asText()).isEqualTo(dry.toString());
    assertThat(Cli.run("calibrate-planner", "--runs", "1", "--dry-run").out()).contains("not written (--dry-run)").contains("walk");
    assertThat(dry).doesNotExist();
    System.clearProperty(PlannerCalibration.PROPERTY);

    // queries on an index plan with the file's costs; the answers stay exact
    SplittableRandom rnd = new SplittableRandom(5);
    boolean[][] codes = new boolean[5_000][70];
    for (boolean[] c : codes) for (int b = 0; b < c.length; b++) c[b] = rnd.nextInt(b % 4 == 0 ? 10 : 2) == 0;
    Path idx = tmp.resolve("idx");
    System.setProperty(PlannerCalibration.PROPERTY, file.toString());
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), codes).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    JsonNode info = JsonWriterTest.STRICT.readTree(Cli.run("info", "--index", idx.toString(), "--format", "json").out());
    assertThat(info.get("planner_costs").get("source").asText()).isEqualTo("calibrated");
    assertThat(info.get("planner_costs").get("file").asText()).isEqualTo(file.toString());
    assertThat(Cli.run("info", "--index", idx.toString()).out()).contains("planner:   costs calibrated on this machine (" + file + ")");
    boolean[][] queries = {codes[7], codes[4_321]};
    Path q = Files2.bits(tmp.resolve("q.npy"), queries);
    Cli.Result n = Cli.run("nearest", "--index", idx.toString(), "--codes", q.toString(), "-k", "5", "--format", "json");
    assertThat(n.code()).as(n.describe()).isZero();
    JsonNode hits = JsonWriterTest.STRICT.readTree(n.out()).get("results");
    for (int i = 0; i < queries.length; i++) {
      List<int[]> want = new ArrayList<>();
      for (int id = 0; id < codes.length; id++) want.add(new int[] {distance(queries[i], codes[id]), id});
      want.sort((x, y) -> x[0] != y[0] ? Integer.compare(x[0], y[0]) : Integer.compare(x[1], y[1]));
      JsonNode got = hits.get(i).get("neighbors");
      for (int r2 = 0; r2 < 5; r2++) {
        assertThat(got.get(r2).get("id").asInt()).as("query " + i + " rank " + r2).isEqualTo(want.get(r2)[1]);
        assertThat(got.get(r2).get("distance").asInt()).isEqualTo(want.get(r2)[0]);
      }
    }

    // a damaged calibration: the query names the file and exits 2
    Files.writeString(file, "format=1\nwalk=fast\n");
    Files.setLastModifiedTime(file, java.nio.file.attribute.FileTime.fromMillis(System.currentTimeMillis() + 10_000));
    Cli.Result bad = Cli.run("nearest", "--index", idx.toString(), "--codes", q.toString(), "-k", "5");
    assertThat(bad.code()).as(bad.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(bad.err().strip()).as(bad.describe()).doesNotContain("\n").contains(file.toString()).contains("walk 'fast' is not a number");
    // the message starts at the costs file: it used to begin "index file .../seg-0.tables: tables payload:", blaming the index
    assertThat(bad.err()).as(bad.describe()).startsWith("actindex nearest: planner costs " + file).doesNotContain("seg-");
    Cli.Result check = Cli.run("check", "--index", idx.toString());
    assertThat(check.code()).as(check.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(check.err()).as(check.describe()).contains("planner costs " + file).doesNotContain("tables payload");
  }

  @Test
  void badOptionsAndUnwritablePlacesAreRefused() throws Exception {
    for (String runs : new String[] {"0", "-1", "101"}) {
      Cli.Result r = Cli.run("calibrate-planner", "--runs", runs, "--out", tmp.resolve("x").toString());
      assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(r.err()).as(r.describe()).contains("--runs must be 1..100");
    }
    // --out with --dry-run: the one names a file to write, the other writes none; refused before anything is measured
    Path wanted = tmp.resolve("wanted.properties");
    for (String[] args : List.of(new String[] {"calibrate-planner", "--out", wanted.toString(), "--dry-run"},
        new String[] {"calibrate-planner", "--dry-run", "--runs", "1", "--out", wanted.toString(), "--format", "json"})) {
      Cli.Result both = Cli.run(args);
      assertThat(both.code()).as(both.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(both.err()).as(both.describe()).contains("--out names the file to write; --dry-run writes none").doesNotContain("\tat ");
      assertThat(both.out()).as(both.describe()).isEmpty();
      assertThat(wanted).doesNotExist();
    }
    Path plain = Files.writeString(tmp.resolve("plain-file"), "x");
    Path under = plain.resolve("costs.properties");
    Cli.Result r = Cli.run("calibrate-planner", "--runs", "1", "--out", under.toString());
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err().strip()).as(r.describe()).doesNotContain("\n").doesNotContain("\tat ").contains(under.toString()).contains("cannot be written");
    assertThat(Files.readString(plain)).isEqualTo("x");
  }

  private static int distance(boolean[] a, boolean[] b) {
    int d = 0;
    for (int i = 0; i < a.length; i++) if (a[i] != b[i]) d++;
    return d;
  }
}
