package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

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
 * {@code census} and {@code report} call a unit dead (always on) only when the examples bound its
 * firing (off) rate at 95% to 5% or less, 59 examples or more, and say the bound beside the counts;
 * with fewer they say the examples are too few. Codes of 6 bits: unit 0 never on, unit 1 always on,
 * the others random.
 */
class DeadUnitsEndToEndTest {
  @TempDir Path tmp;
  static final ObjectMapper JSON = new ObjectMapper();

  /**
   * The sentence for each n, its percentage scipy.stats.beta.ppf(0.95, 1, n) (the Clopper-Pearson
   * upper limit for 0 successes: 0.95, 0.1391, 0.05034, 0.04951, 0.007461) rounded up to 2 significant digits.
   */
  static final Map<Integer, String> NOTES = Map.of(
      1, "Too few examples to call a unit dead or always on: a unit never on in 1 example may still fire on up to 95% of inputs like them",
      20, "Too few examples to call a unit dead or always on: a unit never on in 20 examples may still fire on up to 14% of inputs like them",
      58, "Too few examples to call a unit dead or always on: a unit never on in 58 examples may still fire on up to 5.1% of inputs like them",
      59, "Dead: never on in these 59 examples, so its firing rate on inputs like them is below 5.0% (95% upper bound); always on: never off"
          + " in them, so its off rate is below 5.0%.",
      400, "Dead: never on in these 400 examples, so its firing rate on inputs like them is below 0.75% (95% upper bound); always on: never off"
          + " in them, so its off rate is below 0.75%.");

  @Test
  void deadAndAlwaysOnAreCalledOnlyFromEnoughExamples() throws Exception {
    SplittableRandom rnd = new SplittableRandom(11);
    for (int n : new int[] {1, 20, 58, 59, 400}) {
      boolean[][] rows = new boolean[n][6];
      for (boolean[] r : rows) {
        r[1] = true;
        for (int j = 2; j < 6; j++) r[j] = rnd.nextBoolean();
      }
      if (n > 1) for (int j = 2; j < 6; j++) { // units 2-5 neither never nor always on
        rows[0][j] = true;
        rows[1][j] = false;
      }
      Path idx = tmp.resolve("i" + n), page = tmp.resolve("r" + n + ".html");
      Cli.Result b = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c" + n + ".npy"), rows).toString());
      assertThat(b.code()).as(b.describe()).isZero();
      double bound = 1 - Math.pow(0.05, 1.0 / n);
      boolean call = bound <= 0.05;
      String why = "n = " + n;

      Cli.Result j = Cli.run("census", "--index", idx.toString(), "--format", "json");
      assertThat(j.code()).as(j.describe()).isZero();
      JsonNode neurons = JSON.readTree(j.out()).get("neurons").get(0);
      String layer = neurons.get("layer").asText();
      List<String> fields = new ArrayList<>();
      neurons.fieldNames().forEachRemaining(fields::add);
      assertThat(fields).as(why + ": fields kept, the new ones last")
          .containsExactly("layer", "firing_rates", "dead", "always_on", "rate_bound", "too_few_examples");
      assertThat(neurons.get("rate_bound").asDouble()).as(why).isCloseTo(bound, within(1e-12));
      assertThat(neurons.get("too_few_examples").asBoolean()).as(why).isEqualTo(!call);
      assertThat(texts(neurons.get("dead"))).as(why).isEqualTo(call ? List.of(layer + ":0") : List.of());
      assertThat(texts(neurons.get("always_on"))).as(why).isEqualTo(call ? List.of(layer + ":1") : List.of());
      assertThat(neurons.get("firing_rates").get(0).asDouble()).as(why).isZero(); // the rates still show it
      assertThat(neurons.get("firing_rates").get(1).asDouble()).as(why).isEqualTo(1.0);

      Cli.Result t = Cli.run("census", "--index", idx.toString());
      assertThat(t.code()).as(t.describe()).isZero();
      assertThat(t.out()).as(why).contains(NOTES.get(n));
      if (call) assertThat(t.out()).as(why).containsPattern(layer + " +6 +\\S+ +1 +1 *\\n").contains("\n  dead: " + layer + ":0\n")
          .contains("\n  always on: " + layer + ":1\n");
      else assertThat(t.out()).as(why).containsPattern(layer + " +6 +\\S+ +n/a +n/a *\\n").doesNotContain("\n  dead: ")
          .doesNotContain("\n  always on: ").contains("it takes 59 examples to bring that bound to 5% or less.");

      List<String> csv = Cli.run("census", "--index", idx.toString(), "--format", "csv").out().lines().toList();
      assertThat(csv.get(1)).as(why).isEqualTo(layer + ",0,0," + (call ? "dead" : ""));
      assertThat(csv.get(2)).as(why).isEqualTo(layer + ",1,1," + (call ? "always-on" : ""));

      Cli.Result r = Cli.run("report", "--index", idx.toString(), "--out", page.toString());
      assertThat(r.code()).as(r.describe()).isZero();
      String section = ReportOddIndexesEndToEndTest.section(Files.readString(page), "neurons");
      assertThat(section).as(why).contains("<p class=\"note\">" + NOTES.get(n));
      if (call) assertThat(section).as(why).contains("<td>1</td><td>1</td><td>" + layer + ":0</td><td>" + layer + ":1</td>");
      else assertThat(section).as(why).contains("<td>n/a</td><td>n/a</td><td></td><td></td>");
    }
  }

  static List<String> texts(JsonNode array) {
    List<String> out = new ArrayList<>();
    array.forEach(v -> out.add(v.asText()));
    return out;
  }
}
