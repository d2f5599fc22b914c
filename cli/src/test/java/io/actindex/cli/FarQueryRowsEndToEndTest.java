package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ObjectNode;
import io.actindex.core.Randoms;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A query file (float64 activations) with one row past float32's range, through the command line:
 * {@code ood score} and {@code nearest --refine} answer every row (exit 0), the far row flagged out
 * with a null score in JSON and an empty CSV cell (no bare Infinity), its neighbours in Hamming
 * order, the other rows as in the file without it, and one note on stderr naming the file and the row.
 * {@code ood calibrate} on such a file, and {@code build} and {@code add} (which keep float32
 * magnitudes), are refused with exit 2 and the index left as it was; a NaN row is refused naming file and row.
 */
class FarQueryRowsEndToEndTest {
  @TempDir Path tmp;

  private static final ObjectMapper JSON = new ObjectMapper(); // strict: a bare Infinity or NaN token is a parse error

  @Test
  void oneFarRowIsFlaggedAndTheOthersAnsweredAsWithoutIt() throws Exception {
    long seed = Randoms.seed(3);
    String why = Randoms.describe(seed);
    SplittableRandom rnd = new SplittableRandom(seed);
    Path idx = tmp.resolve("idx");
    String i = idx.toString();
    Cli.Result b = Cli.run("build", "--out", i, "--activations", Files2.doubles(tmp.resolve("train.npy"), relu(rnd, 300)).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    Cli.Result c = Cli.run("ood", "calibrate", "--index", i, "--activations", Files2.doubles(tmp.resolve("cal.npy"), relu(rnd, 60)).toString(),
        "-k", "2", "--candidates", "30", "--format", "json");
    assertThat(c.code()).as(c.describe()).isZero();
    assertThat(JSON.readTree(c.out()).get("score").asText()).as("the default calibration").isEqualTo("euclidean");
    double[][] plain = relu(rnd, 12);
    int at = 4;
    List<double[]> rows = new ArrayList<>(Arrays.asList(plain));
    double[] far = relu(rnd, 1)[0];
    far[3] = 1e39; // float32 cast: +Infinity (IEEE 754-2019 section 7.4, overflow)
    rows.add(at, far);
    Path q = Files2.doubles(tmp.resolve("q.npy"), plain), qf = Files2.doubles(tmp.resolve("q-far.npy"), rows.toArray(new double[0][]));
    String note = qf + ": note: row " + at + " (0-based) has activations beyond float32's range";

    // ood score, JSON: the far row out, score null, the smallest p-value; the others as without it
    Cli.Result s0 = Cli.run("ood", "score", "--index", i, "--activations", q.toString(), "--format", "json");
    Cli.Result s1 = Cli.run("ood", "score", "--index", i, "--activations", qf.toString(), "--format", "json");
    assertThat(s1.code()).as(s1.describe()).isZero();
    assertThat(s1.err().lines().filter(l -> l.contains("float32")).toList()).as(s1.describe()).singleElement().asString().startsWith(note);
    assertThat(s0.err()).doesNotContain("float32");
    JsonNode r0 = JSON.readTree(s0.out()).get("results"), r1 = JSON.readTree(s1.out()).get("results");
    assertThat(r1.size()).isEqualTo(plain.length + 1);
    JsonNode x = r1.get(at);
    assertThat(x.get("score").isNull()).as(why + ": " + x).isTrue();
    assertThat(x.get("decision").asText()).isEqualTo("out");
    assertThat(x.get("p_value").asDouble()).isEqualTo(1.0 / 61);
    assertThat(x.get("kth").isInt()).as("the Hamming k-th distance is still given").isTrue();
    for (int r = 0, j = 0; r < r1.size(); r++) {
      if (r == at) continue;
      assertThat(withoutQuery(r1.get(r))).as(why + ": row " + r).isEqualTo(withoutQuery(r0.get(j++)));
    }
    // CSV and table: no bare Infinity in CSV (an empty cell), the table says out
    Cli.Result csv = Cli.run("ood", "score", "--index", i, "--activations", qf.toString(), "--format", "csv");
    assertThat(csv.code()).as(csv.describe()).isZero();
    assertThat(csv.out()).doesNotContainIgnoringCase("infinity").doesNotContain("NaN");
    assertThat(csv.out().lines().skip(1 + at).findFirst().orElseThrow()).startsWith(at + ",,").contains(",out,");
    Cli.Result table = Cli.run("ood", "score", "--index", i, "--activations", qf.toString());
    assertThat(table.code()).as(table.describe()).isZero();
    assertThat(table.out().lines().filter(l -> l.trim().startsWith(at + " ")).findFirst().orElseThrow()).contains(" out ");
    assertThat(table.out()).contains("caution: A calibrated heuristic, not a guarantee");

    // nearest --refine, both metrics: the far row in Hamming order with null refined distances; the others as without it
    for (String metric : List.of("euclidean", "cosine")) {
      Cli.Result n0 = Cli.run("nearest", "--index", i, "--activations", q.toString(), "--refine", metric, "-k", "4", "--format", "json");
      Cli.Result n1 = Cli.run("nearest", "--index", i, "--activations", qf.toString(), "--refine", metric, "-k", "4", "--format", "json");
      assertThat(n1.code()).as(n1.describe()).isZero();
      assertThat(n1.err()).as(n1.describe()).contains(note);
      JsonNode a = JSON.readTree(n0.out()).get("results"), f = JSON.readTree(n1.out()).get("results");
      JsonNode nb = f.get(at).get("neighbors");
      assertThat(nb.size()).isEqualTo(4);
      for (int h = 0; h < nb.size(); h++) {
        assertThat(nb.get(h).get("refined_distance").isNull()).as(metric + ": " + nb.get(h)).isTrue();
        if (h > 0) {
          int d0 = nb.get(h - 1).get("distance").asInt(), d1 = nb.get(h).get("distance").asInt();
          assertThat(d0 < d1 || (d0 == d1 && nb.get(h - 1).get("id").asInt() < nb.get(h).get("id").asInt()))
              .as(metric + ": Hamming order, then id: " + nb).isTrue();
        }
      }
      for (int r = 0, j = 0; r < f.size(); r++) {
        if (r == at) continue;
        assertThat(withoutQuery(f.get(r))).as(why + ", " + metric + ": row " + r).isEqualTo(withoutQuery(a.get(j++)));
      }
      Cli.Result ncsv = Cli.run("nearest", "--index", i, "--activations", qf.toString(), "--refine", metric, "-k", "4", "--format", "csv");
      assertThat(ncsv.out()).doesNotContainIgnoringCase("infinity");
      assertThat(ncsv.out().lines().filter(l -> l.startsWith(at + ",")).toList()).hasSize(4)
          .allSatisfy(l -> assertThat(l.split(",", -1)[5]).as("refined_distance").isEmpty());
    }

    // refusals: exit 2, one line naming the file and the row, the index unchanged
    Map<String, String> before = Files2.checksums(idx);
    Cli.Result cal = Cli.run("ood", "calibrate", "--index", i, "--activations", qf.toString());
    assertThat(cal.code()).as(cal.describe()).isEqualTo(2);
    assertThat(cal.err().lines().filter(l -> !l.isBlank()).toList()).as(cal.describe()).singleElement().asString()
        .contains(qf + ": row " + at + " (0-based)").contains("float32");
    Cli.Result add = Cli.run("add", "--index", i, "--activations", qf.toString());
    assertThat(add.code()).as(add.describe()).isEqualTo(2);
    assertThat(add.err()).as(add.describe()).contains(qf + ": row " + at + ", column 3 (0-based): value 1.0E39 does not fit the float32");
    double[][] nan = plain.clone();
    nan[6] = plain[6].clone();
    nan[6][2] = Double.NaN;
    Path qn = Files2.doubles(tmp.resolve("q-nan.npy"), nan);
    for (String[] args : List.of(new String[] {"nearest", "--index", i, "--activations", qn.toString(), "--refine"},
        new String[] {"ood", "score", "--index", i, "--activations", qn.toString()})) {
      Cli.Result r = Cli.run(args);
      assertThat(r.code()).as(r.describe()).isEqualTo(2);
      assertThat(r.err()).as(r.describe()).contains(qn + ": row 6, column 2 (0-based)").contains("NaN");
    }
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  /** A result without its "query" member (the row number shifts by one past the far row). */
  private static JsonNode withoutQuery(JsonNode result) {
    ObjectNode o = result.deepCopy();
    o.remove("query");
    return o;
  }

  /** ReLU-like rows of 16 units: every third unit mostly off. */
  private static double[][] relu(SplittableRandom rnd, int n) {
    double[][] rows = new double[n][16];
    for (double[] r : rows) for (int j = 0; j < 16; j++) r[j] = Math.max(0, rnd.nextGaussian() + (j % 3 == 0 ? -1 : 0.3));
    return rows;
  }
}
