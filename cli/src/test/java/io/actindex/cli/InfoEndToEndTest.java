package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.format.JsonWriterTest;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code info}'s id counts: ids are given out from 0 and never reused, so the field for the id
 * range is the next free id ({@code next_id}, exclusive: one past the largest id ever given out,
 * deleted ones included), and the table names the range inclusively, or says none was given out;
 * and the memory a segment's partition builds on first use.
 */
class InfoEndToEndTest {
  @TempDir Path tmp;

  private static JsonNode json(Path idx) throws Exception {
    Cli.Result r = Cli.run("info", "--index", idx.toString(), "--format", "json");
    assertThat(r.code()).as(r.describe()).isZero();
    return JsonWriterTest.STRICT.readTree(r.out());
  }

  private static String table(Path idx) {
    Cli.Result r = Cli.run("info", "--index", idx.toString());
    assertThat(r.code()).as(r.describe()).isZero();
    return r.out();
  }

  @Test
  void theIdFieldIsTheNextFreeIdAndTheTableShowsTheLargestIdGivenOut() throws Exception {
    Path idx = tmp.resolve("idx");
    boolean[][] codes = new boolean[5][9];
    for (int i = 0; i < codes.length; i++) codes[i][i] = true;
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), codes).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    assertThat(Cli.run("delete", "--index", idx.toString(), "--where", "key = row-4").code()).isZero(); // the largest id

    JsonNode info = json(idx);
    // the earlier name stays (JSON fields are stable) with the same number
    assertThat(info.get("max_id").asInt()).as(info.toString()).isEqualTo(info.get("next_id").asInt());
    assertThat(info.get("next_id").asInt()).isEqualTo(5);
    assertThat(info.get("live").asInt()).isEqualTo(4);
    assertThat(info.get("deleted").asInt()).isEqualTo(1);
    assertThat(table(idx)).contains("examples:  4 live, 1 deleted (ids 0..4 given out, next id 5)");
  }

  @Test
  void anIndexWithoutCodesHasGivenOutNoId() throws Exception {
    Path idx = tmp.resolve("empty");
    IndexWriter.create(idx, CodeLayout.single("code", 9), Map.of()).close();
    assertThat(json(idx).get("next_id").asInt()).isZero();
    assertThat(table(idx)).contains("examples:  0 live, 0 deleted (no id given out yet, next id 0)");
  }

  /**
   * A segment's memory counts, at its most, the table of places its partition builds on the first
   * filtered query (4 bytes per code; one layer: no radii for masked layer sets), though info runs
   * no query; a segment too small for a partition builds nothing on use.
   */
  @Test
  void memoryCountsWhatThePartitionBuildsOnFirstUse() throws Exception {
    long seed = Randoms.seed(0);
    SplittableRandom rnd = new SplittableRandom(seed);
    boolean[][] codes = new boolean[5000][40]; // a partition from 4,096 codes up
    for (boolean[] row : codes) for (int b = 0; b < row.length; b++) row[b] = rnd.nextBoolean();
    Path big = tmp.resolve("big"), small = tmp.resolve("small");
    for (Path idx : List.of(big, small)) {
      boolean[][] rows = idx == big ? codes : Arrays.copyOf(codes, 50);
      Cli.Result built = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve(idx.getFileName() + ".npy"), rows).toString());
      assertThat(built.code()).as(built.describe()).isZero();
    }
    JsonNode searcher = json(big).get("segments").get(0).get("searcher");
    assertThat(searcher.get("on_demand_bytes").asLong()).as(Randoms.describe(seed) + "\n" + searcher).isEqualTo(4L * codes.length);
    assertThat(table(big)).contains(" + up to 19.5 KiB on demand"); // 20,000 bytes
    assertThat(json(small).get("segments").get(0).get("searcher").get("on_demand_bytes").asLong()).isZero();
    assertThat(table(small)).doesNotContain("on demand");

    // the CSV ends each line with the same three memory figures as the JSON
    Cli.Result csv = Cli.run("info", "--index", big.toString(), "--format", "csv");
    assertThat(csv.code()).as(csv.describe()).isZero();
    String[] lines = csv.out().strip().split("\\R");
    assertThat(lines[0]).endsWith(",code_bytes,table_bytes,on_demand_bytes");
    assertThat(lines[1]).as(csv.out()).endsWith("," + searcher.get("code_bytes").asLong() + "," + searcher.get("table_bytes").asLong()
        + "," + 4L * codes.length);
  }
}
