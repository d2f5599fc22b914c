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
}
