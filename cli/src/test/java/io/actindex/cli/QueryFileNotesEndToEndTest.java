package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.Randoms;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * How a query file was read (here: its CSV header) goes to stderr for every command that reads one,
 * as nearest has always said it, not only for nearest and compare.
 */
class QueryFileNotesEndToEndTest {
  @TempDir Path tmp;

  private Path csv(String name, SplittableRandom rnd, int rows) {
    List<String> lines = new ArrayList<>(List.of("a0,a1,a2,a3,a4,a5,a6,a7"));
    for (int i = 0; i < rows; i++) {
      StringBuilder s = new StringBuilder();
      for (int j = 0; j < 8; j++) s.append(j == 0 ? "" : ",").append(rnd.nextInt(5) - 2);
      lines.add(s.toString());
    }
    return Files2.text(tmp.resolve(name), lines);
  }

  @Test
  void everyCommandReadingAQueryCsvSaysItTookLineOneAsTheHeader() {
    long seed = Randoms.seed(0);
    SplittableRandom rnd = new SplittableRandom(seed);
    Path idx = tmp.resolve("idx");
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--activations", csv("train.csv", rnd, 60).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    Path cal = csv("cal.csv", rnd, 30), in = csv("in.csv", rnd, 20), out = csv("out.csv", rnd, 20);
    List<Cli.Result> runs = new ArrayList<>();
    runs.add(Cli.run("ood", "calibrate", "--index", idx.toString(), "--activations", cal.toString(), "-k", "1"));
    runs.add(Cli.run("ood", "score", "--index", idx.toString(), "--activations", in.toString(), "--format", "json"));
    runs.add(Cli.run("ood", "eval", "--index", idx.toString(), "--in", in.toString(), "--out", out.toString(), "--format", "json"));
    runs.add(Cli.run("dupes", "--index", idx.toString(), "--radius", "1", "--against", in.toString()));
    runs.add(Cli.run("report", "--index", idx.toString(), "--out", tmp.resolve("r.html").toString(), "--compare-a", in.toString(),
        "--compare-b", out.toString()));
    // fidelity on a file: its header, and labels that write one number two ways (as build notes them)
    List<String> labels = new ArrayList<>(List.of("label"));
    for (int i = 0; i < 60; i++) labels.add(i == 7 ? "1.0" : Integer.toString(i % 3));
    Path meta = Files2.text(tmp.resolve("labels.csv"), labels);
    runs.add(Cli.run("fidelity", "--activations", tmp.resolve("train.csv").toString(), "--meta", meta.toString(), "-k", "3"));
    for (Cli.Result r : runs) {
      assertThat(r.code()).as(r.describe() + "\n" + Randoms.describe(seed)).isZero();
      for (String arg : r.args())
        if (arg.endsWith(".csv") && !arg.endsWith("labels.csv")) assertThat(r.err()).as(r.describe()).contains(arg + ": line 1 taken as the header");
    }
    assertThat(runs.getLast().err()).contains(meta + ": note: label '1.0' and '1' earlier in the file are the same number written two ways");
    // stdout stays the JSON document alone
    assertThat(runs.get(2).out().trim()).startsWith("{").endsWith("}");
  }

  /**
   * The float files of ood eval (--in-floats, --out-floats, --train-floats) and compare (--a-floats,
   * --b-floats) say how their CSV header was read as the sample files do: ood eval on stderr,
   * compare among its notes (table and JSON), each file once even when a sample is its own floats.
   */
  @Test
  void floatFilesSayTheyTookLineOneAsTheHeader() {
    long seed = Randoms.seed(1);
    SplittableRandom rnd = new SplittableRandom(seed);
    Path idx = tmp.resolve("idx");
    Path train = csv("train.csv", rnd, 60);
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--activations", train.toString(), "--magnitudes", "8");
    assertThat(built.code()).as(built.describe()).isZero();
    Path cal = csv("cal.csv", rnd, 30), in = csv("in.csv", rnd, 20), out = csv("out.csv", rnd, 20);
    Path inF = csv("in-floats.csv", rnd, 20), outF = csv("out-floats.csv", rnd, 20), trainF = csv("train-floats.csv", rnd, 60);
    Cli.Result c = Cli.run("ood", "calibrate", "--index", idx.toString(), "--activations", cal.toString(), "-k", "1", "--score", "code");
    assertThat(c.code()).as(c.describe()).isZero();
    Cli.Result eval = Cli.run("ood", "eval", "--index", idx.toString(), "--in", in.toString(), "--out", out.toString(),
        "--in-floats", inF.toString(), "--out-floats", outF.toString(), "--train-floats", trainF.toString(), "--format", "json");
    assertThat(eval.code()).as(eval.describe() + "\n" + Randoms.describe(seed)).isZero();
    for (Path f : List.of(in, out, inF, outF, trainF)) assertThat(eval.err()).as(eval.describe()).contains(f + ": line 1 taken as the header");
    assertThat(eval.out().trim()).startsWith("{").endsWith("}");

    Path aF = csv("a-floats.csv", rnd, 20), bF = csv("b-floats.csv", rnd, 20);
    Cli.Result given = Cli.run("compare", "--a", in.toString(), "--b", out.toString(), "--a-floats", aF.toString(), "--b-floats",
        bF.toString(), "--permutations", "9");
    assertThat(given.code()).as(given.describe()).isZero();
    for (Path f : List.of(in, out, aF, bF)) assertThat(given.out()).as(given.describe()).contains("note: " + f + ": line 1 taken as the header");
    Cli.Result own = Cli.run("compare", "--a", in.toString(), "--b", out.toString(), "--permutations", "9");
    assertThat(own.code()).as(own.describe()).isZero();
    String once = "note: " + in + ": line 1 taken as the header";
    assertThat(own.out().split(java.util.regex.Pattern.quote(once), -1)).as(own.describe()).hasSize(2);
  }
}
