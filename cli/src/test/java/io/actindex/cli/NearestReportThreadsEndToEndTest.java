package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.format.JsonWriterTest;
import io.actindex.core.Randoms;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code nearest} and {@code report} default {@code --threads} to one per core: on an index of three
 * segments with deletions, {@code --threads 1}, {@code 3} and the default print the same bytes
 * (nearest: every format, plain, {@code --ties} and {@code --refine}; report: the page, with the
 * join and the comparison, and its stdout).
 */
class NearestReportThreadsEndToEndTest {
  @TempDir Path tmp;

  private static final List<List<String>> THREADS = List.of(List.of("--threads", "1"), List.of("--threads", "3"), List.of());

  @Test
  void outputDoesNotDependOnTheThreadCount() throws Exception {
    long seed = Randoms.seed(611);
    String what = Randoms.describe(seed);
    SplittableRandom r = new SplittableRandom(seed);
    Path idx = tmp.resolve("idx");
    String i = idx.toString();
    int n = 0;
    for (int part = 0; part < 3; part++) { // build, then two adds: one segment each
      float[][] rows = OodEndToEndTest.floats(700, 0.1, r.nextLong());
      for (int c = 0; c < 40; c++) rows[r.nextInt(rows.length)] = rows[r.nextInt(rows.length)].clone(); // exact copies: distance 0
      List<String> meta = new ArrayList<>(List.of("key,label,split"));
      for (int e = 0; e < rows.length; e++)
        meta.add("k" + (n + e) + "," + NearestEndToEndTest.LABELS[r.nextInt(3)] + "," + (r.nextInt(4) == 0 ? "test" : "train"));
      String acts = Files2.floats(tmp.resolve("a" + part + ".npy"), rows).toString();
      String csv = Files2.text(tmp.resolve("m" + part + ".csv"), meta).toString();
      ok(part == 0 ? Cli.run("build", "--out", i, "--activations", acts, "--meta", csv)
          : Cli.run("add", "--index", i, "--activations", acts, "--meta", csv, "--threads", "1"));
      n += rows.length;
    }
    List<String> gone = new ArrayList<>();
    for (int e = 0; e < n; e++) if (r.nextInt(7) == 0) gone.add("k" + e);
    ok(Cli.run("delete", "--index", i, "--keys", Files2.text(tmp.resolve("gone.txt"), gone).toString()));
    JsonNode info = JsonWriterTest.STRICT.readTree(ok(Cli.run("info", "--index", i, "--format", "json")).out());
    assertThat(info.get("segments").size()).as(what).isGreaterThanOrEqualTo(2);
    assertThat(info.get("deleted").asInt()).as(what).isEqualTo(gone.size());

    String queries = Files2.floats(tmp.resolve("q.npy"), OodEndToEndTest.floats(37, 0.2, r.nextLong())).toString();
    for (String format : List.of("table", "json", "csv"))
      for (List<String> mode : List.of(List.of("-k", "5"), List.of("-k", "4", "--ties"), List.of("-k", "5", "--refine")))
        same(what + ", nearest " + mode + " " + format, threads -> {
          List<String> args = new ArrayList<>(List.of("nearest", "--index", i, "--activations", queries, "--format", format));
          args.addAll(mode);
          args.addAll(threads);
          return Cli.run(args.toArray(String[]::new));
        }, null);

    String a = Files2.floats(tmp.resolve("ca.npy"), OodEndToEndTest.floats(40, 0.1, r.nextLong())).toString();
    String b = Files2.floats(tmp.resolve("cb.npy"), OodEndToEndTest.floats(30, 0.4, r.nextLong())).toString();
    Path page = tmp.resolve("page.html");
    same(what + ", report", threads -> {
      List<String> args = new ArrayList<>(List.of("report", "--index", i, "--out", page.toString(), "--dupes-radius", "2",
          "--compare-a", a, "--compare-b", b));
      args.addAll(threads);
      return Cli.run(args.toArray(String[]::new));
    }, page);
    assertThat(Files.readString(page)).as(what).contains("id=\"nearest-other\"").contains("id=\"dupes\"").contains("id=\"compare\"");

    for (String command : List.of("nearest", "report"))
      assertThat(Cli.run(command, "--help").out().replaceAll("\\s+", " ")).as(command).contains("Default: 0 (0 = one per core)");
  }

  /**
   * Runs {@code run} with each of {@link #THREADS} and checks that stdout, stderr and (when not
   * null) the file {@code page} are the same every time.
   */
  private static void same(String what, java.util.function.Function<List<String>, Cli.Result> run, Path page) throws Exception {
    List<String> outputs = new ArrayList<>();
    for (List<String> threads : THREADS) {
      Cli.Result res = ok(run.apply(threads));
      outputs.add(res.out() + "\n--- stderr\n" + res.err() + (page == null ? "" : "\n--- page\n" + Files.readString(page)));
    }
    assertThat(outputs.get(0)).as(what).isNotBlank();
    assertThat(outputs).as(what).containsOnly(outputs.get(0));
  }

  private static Cli.Result ok(Cli.Result r) {
    assertThat(r.code()).as(r.describe()).isZero();
    return r;
  }
}
