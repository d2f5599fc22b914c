package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.format.JsonWriterTest;
import java.io.BufferedReader;
import java.io.InputStreamReader;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code check} while another process writes ({@link WritingChild}, paused with every file of its
 * add written but its manifest): the change's files are listed as leftovers, as before, but a note
 * says that a writer holds the lock and that they may belong to the running change, the table no
 * longer calls them safe to delete, JSON says {@code writer_running}, and the exit code is still 0
 * for a sound index. Once the writer ends, the same files are part of the index and no note is left.
 */
class CheckDuringWriteEndToEndTest {
  @TempDir Path tmp;

  private static Cli.Result ok(Cli.Result r) {
    assertThat(r.code()).as(r.describe()).isZero();
    return r;
  }

  private static JsonNode json(Cli.Result r) throws Exception {
    return JsonWriterTest.STRICT.readTree(ok(r).out());
  }

  private static List<String> leftovers(JsonNode doc) {
    List<String> out = new ArrayList<>();
    doc.get("files").forEach(f -> {
      if (f.get("status").asText().equals("leftover")) out.add(f.get("file").asText());
    });
    return out;
  }

  @Test
  void checkDuringAWriteSaysAWriterHoldsTheLockAndExitsZero() throws Exception {
    SplittableRandom rnd = new SplittableRandom(5);
    boolean[][] codes = new boolean[120][70];
    for (boolean[] c : codes) for (int b = 0; b < c.length; b++) c[b] = rnd.nextInt(3) == 0;
    List<String> meta = new ArrayList<>(List.of("key,label"));
    for (int i = 0; i < codes.length; i++) meta.add("k" + i + "," + (i % 2 == 0 ? "a" : "b"));
    Path idx = tmp.resolve("idx");
    ok(Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), codes).toString(),
        "--meta", Files2.text(tmp.resolve("m.csv"), meta).toString()));
    String idle = ok(Cli.run("check", "--index", idx.toString())).err();
    assertThat(idle).doesNotContain("writer");
    assertThat(json(Cli.run("check", "--index", idx.toString(), "--format", "json")).get("writer_running").asBoolean()).isFalse();

    String java = Path.of(System.getProperty("java.home"), "bin", "java").toString();
    Process p = new ProcessBuilder(java, "-XX:TieredStopAtLevel=1", "-cp", System.getProperty("java.class.path"),
        WritingChild.class.getName(), idx.toString()).redirectError(ProcessBuilder.Redirect.INHERIT).start();
    BufferedReader childOut = new BufferedReader(new InputStreamReader(p.getInputStream(), StandardCharsets.UTF_8));
    List<String> during;
    try {
      assertThat(childOut.readLine()).isEqualTo("WRITING");
      Map<String, String> before = Files2.checksums(idx);
      Cli.Result table = ok(Cli.run("check", "--index", idx.toString()));
      String note = "note: a writer holds " + idx.resolve("writer.lock") + " (an add, delete or compact is running on this index)";
      assertThat(table.err().strip()).as(table.describe()).startsWith(note).doesNotContain("\n")
          .contains("files it has not committed yet are listed as leftovers").contains("do not delete them");
      assertThat(table.out()).as(table.describe()).contains("every file of the index is sound")
          .contains("files of the change now running").contains("do not delete any while that change runs")
          .doesNotContain("safe to delete").containsPattern("seg-\\d+\\.codes: \\d+ bytes, the running change's, or removed");
      JsonNode doc = json(Cli.run("check", "--index", idx.toString(), "--format", "json"));
      assertThat(doc.get("ok").asBoolean()).isTrue();
      assertThat(doc.get("writer_running").asBoolean()).isTrue();
      during = leftovers(doc);
      assertThat(during).as(doc.toString()).anyMatch(f -> f.matches("seg-\\d+\\.codes"))
          .anyMatch(f -> f.matches("manifest-\\d+\\.tmp")).anyMatch(f -> f.startsWith("meta/segments_"));
      Cli.Result csv = ok(Cli.run("check", "--index", idx.toString(), "--format", "csv"));
      assertThat(csv.err().strip()).startsWith(note);
      assertThat(Files2.checksums(idx)).isEqualTo(before); // check never writes
    } finally {
      p.getOutputStream().close();
      assertThat(p.waitFor(60, TimeUnit.SECONDS)).isTrue();
    }
    assertThat(childOut.readLine()).isEqualTo("DONE");
    assertThat(p.exitValue()).isZero();

    Cli.Result after = ok(Cli.run("check", "--index", idx.toString(), "--format", "json"));
    assertThat(after.err()).doesNotContain("writer");
    JsonNode doc = JsonWriterTest.STRICT.readTree(after.out());
    assertThat(doc.get("writer_running").asBoolean()).isFalse();
    assertThat(leftovers(doc)).isEmpty();
    List<String> files = new ArrayList<>();
    doc.get("files").forEach(f -> files.add(f.get("file").asText()));
    for (String f : during) // the running change's files are now the index's (the temporary manifest renamed)
      if (!f.endsWith(".tmp")) assertThat(files).as(f).contains(f);
    JsonNode info = json(Cli.run("info", "--index", idx.toString(), "--format", "json"));
    assertThat(info.get("live").asInt()).isEqualTo(codes.length + WritingChild.ADDED);
  }
}
