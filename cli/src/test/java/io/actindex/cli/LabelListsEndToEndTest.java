package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Tables list labels and splits with their counts in one cell ({@code dog 2, cat 1} in region and
 * census, {@code dog:2 cat:1} in dupes): a name holding a space, comma, colon or double quote read
 * as two names or as a count ("bird, small 1", "a:b:1"). Such names are quoted in tables; JSON and
 * CSV, exact already, stay as they were.
 */
class LabelListsEndToEndTest {
  @TempDir Path tmp;

  static final String[] LABELS = {"dog", "bird, small", "a:b", "big cat", "x \"q\"", "dog"};

  @Test
  void namesThatWouldSplitAListAreQuotedInTablesOnly() throws Exception {
    // six examples in one region (identical codes), one label each; splits "test set" and "train"
    boolean[][] codes = new boolean[8][5];
    for (int i = 0; i < 6; i++) codes[i][1] = codes[i][3] = true;
    codes[6][0] = codes[7][4] = true;
    List<String> meta = new ArrayList<>(List.of("key,label,split"));
    for (int i = 0; i < 8; i++)
      meta.add("k" + i + ",\"" + (i < 6 ? LABELS[i] : "dog").replace("\"", "\"\"") + "\"," + (i % 2 == 0 ? "test set" : "train"));
    Path idx = tmp.resolve("idx"), file = Files2.bits(tmp.resolve("codes.npy"), codes);
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--codes", file.toString(), "--meta",
        Files2.text(tmp.resolve("meta.csv"), meta).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    String i = idx.toString(), q = file.toString();

    String quoted = "dog 2, \"a:b\" 1, \"big cat\" 1, \"bird, small\" 1, \"x \"\"q\"\"\" 1";
    assertThat(Cli.run("region", "--index", i, "--codes", q, "--rows", "0:1").out()).contains("(" + quoted + ";");
    assertThat(Cli.run("census", "--index", i).out()).contains("  " + quoted + "  ");
    String dupes = Cli.run("dupes", "--index", i, "--radius", "0").out();
    assertThat(dupes).contains("  dog:2 \"a:b\":1 \"big cat\":1 \"bird, small\":1 \"x \"\"q\"\"\":1  ").contains("  \"test set\":3 train:3  ");

    // JSON and CSV keep the names as given
    JsonNode region = NearestEndToEndTest.json("region", "--index", i, "--codes", q, "--rows", "0:1", "--format", "json");
    assertThat(region.get("results").get(0).get("same").get("labels").properties()).extracting(e -> e.getKey() + "=" + e.getValue())
        .containsExactly("dog=2", "a:b=1", "big cat=1", "bird, small=1", "x \"q\"=1");
    assertThat(Cli.run("region", "--index", i, "--codes", q, "--rows", "0:1", "--format", "csv").out())
        .contains(",\"dog:2;a:b:1;big cat:1;bird, small:1;x \"\"q\"\":1\",");
    assertThat(Cli.run("dupes", "--index", i, "--radius", "0", "--format", "csv").out())
        .contains(",\"dog:2;a:b:1;big cat:1;bird, small:1;x \"\"q\"\":1\",test set:3;train:3,");

    // ordinary names stay bare
    assertThat(dupes).doesNotContain("\"dog\"").doesNotContain("\"train\"");
  }
}
