package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.Randoms;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.SplittableRandom;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code report --compare-a/--compare-b} takes its files as {@code compare --index} does: for an
 * index built from a model, inputs or hidden activations by their width; a width that fits both is
 * refused until {@code --compare-kind} says which.
 */
class ReportCompareEndToEndTest {
  @TempDir Path tmp;

  @Test
  void theFilesKindFollowsTheIndexAndTheirWidth() throws Exception {
    SplittableRandom r = new SplittableRandom(Randoms.seed(402));
    // 3 inputs, 4 hidden units: inputs and hidden activations have different widths
    Path idx = tmp.resolve("m3"), in = Files2.floats(tmp.resolve("in.npy"), SourcesEndToEndTest.activations(30, 3, r));
    ok(Cli.run("build", "--out", idx.toString(), "--model", CompareEndToEndTest.mlp(tmp.resolve("m3.safetensors"), 3, r).toString(),
        "--inputs", in.toString()));
    String ia = Files2.floats(tmp.resolve("ia.npy"), SourcesEndToEndTest.activations(12, 3, r)).toString();
    String ib = Files2.floats(tmp.resolve("ib.npy"), SourcesEndToEndTest.activations(12, 3, r)).toString();
    String ha = Files2.floats(tmp.resolve("ha.npy"), SourcesEndToEndTest.activations(12, 4, r)).toString();
    String hb = Files2.floats(tmp.resolve("hb.npy"), SourcesEndToEndTest.activations(12, 4, r)).toString();

    // hidden activations were read as the model's inputs and refused (4 columns, the model takes 3)
    assertThat(comparison(idx, ha, hb)).isEqualTo(comparison(idx, ha, hb, "--compare-kind", "activations"));
    assertThat(comparison(idx, ia, ib)).isEqualTo(comparison(idx, ia, ib, "--compare-kind", "inputs"));
    // the page shows no floats: report takes none from the model, while compare on the same files does (and says so)
    Cli.Result page = ok(report(idx, "floats.html", ia, ib));
    assertThat(page.err()).as(page.describe()).doesNotContain("float sample");
    Cli.Result compared = ok(Cli.run("compare", "--index", idx.toString(), "--a", ia, "--b", ib, "--permutations", "20"));
    assertThat(compared.out()).as(compared.describe()).contains("float sample A: the model's hidden activations (after ReLU) on " + ia);
    Cli.Result asInputs = report(idx, "wrong.html", ha, hb, "--compare-kind", "inputs");
    assertThat(asInputs.code()).as("a typed kind is used as given: " + asInputs.describe()).isEqualTo(ExitCodes.USAGE);

    // 4 inputs, 4 hidden units: a 4-column file could be either
    Path idx4 = tmp.resolve("m4"), in4 = Files2.floats(tmp.resolve("in4.npy"), SourcesEndToEndTest.activations(30, 4, r));
    ok(Cli.run("build", "--out", idx4.toString(), "--model", CompareEndToEndTest.mlp(tmp.resolve("m4.safetensors"), 4, r).toString(),
        "--inputs", in4.toString()));
    Cli.Result refused = report(idx4, "either.html", ha, hb);
    assertThat(refused.code()).as(refused.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(refused.err().strip()).as(refused.describe()).contains(ha).contains("--compare-kind inputs")
        .contains("--compare-kind activations").doesNotContain("\n");
    assertThat(tmp.resolve("either.html")).as("no page after a refusal").doesNotExist();
    try (Stream<Path> files = Files.list(tmp)) {
      assertThat(files.map(p -> p.getFileName().toString())).as("no temporary page left").noneMatch(n -> n.contains("either"));
    }
    for (String kind : new String[] {"inputs", "activations"}) ok(report(idx4, "either.html", ha, hb, "--compare-kind", kind));
  }

  @Test
  void compareOnlyOptionsWithoutAComparisonAreRefused() {
    Path idx = tmp.resolve("c");
    boolean[][] codes = CompareEndToEndTest.codes(new SplittableRandom(Randoms.seed(403)), 20, 10, 0);
    ok(Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), codes).toString()));
    for (String[] option : new String[][] {{"--compare-kind", "codes"}, {"--header", "no"}}) {
      Cli.Result r = Cli.run("report", "--index", idx.toString(), "--out", tmp.resolve("p.html").toString(), option[0], option[1]);
      assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(r.err()).as(r.describe()).contains(option[0]);
      assertThat(tmp.resolve("p.html")).doesNotExist();
    }
  }

  /** The comparison section of the page {@code report} writes about {@code idx} with these files. */
  private String comparison(Path idx, String a, String b, String... more) throws Exception {
    Path page = tmp.resolve("page.html");
    ok(report(idx, page.getFileName().toString(), a, b, more));
    String section = ReportOddIndexesEndToEndTest.section(Files.readString(page), "compare");
    Files.delete(page);
    return section;
  }

  private Cli.Result report(Path idx, String page, String a, String b, String... more) {
    String[] args = {"report", "--index", idx.toString(), "--out", tmp.resolve(page).toString(), "--compare-a", a, "--compare-b", b};
    return Cli.run(Stream.concat(Stream.of(args), Stream.of(more)).toArray(String[]::new));
  }

  private static Cli.Result ok(Cli.Result r) {
    assertThat(r.code()).as(r.describe()).isZero();
    return r;
  }
}
