package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.stream.Stream;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Where outputs may go and what shapes inputs may have: an output file that is one of the command's
 * inputs (under any name: the same path, {@code ./x}, a symbolic link) is refused before anything is
 * written, so the input keeps its bytes ('report --out a.npy --compare-a a.npy' replaced the sample
 * with HTML); a new index inside an index folder is refused; a 1-D {@code .npy} array is refused
 * with the shapes that would do. Each refusal: exit 2, one line naming the option and the file.
 */
class OutputsEndToEndTest {
  @TempDir Path tmp;
  Path idx, train, in, out, floats, outFloats, query, sampleA, sampleB;

  @BeforeEach
  void indexWithACalibration() {
    idx = tmp.resolve("idx");
    train = Files2.floats(tmp.resolve("train.npy"), OodEndToEndTest.floats(200, 0.1, 1));
    Path cal = Files2.floats(tmp.resolve("cal.npy"), OodEndToEndTest.floats(40, 0.1, 2));
    in = Files2.floats(tmp.resolve("in.npy"), OodEndToEndTest.floats(20, 0.1, 3));
    out = Files2.floats(tmp.resolve("out.npy"), OodEndToEndTest.floats(20, 0.6, 4));
    floats = Files2.floats(tmp.resolve("floats.npy"), OodEndToEndTest.floats(20, 0.1, 5));
    outFloats = Files2.floats(tmp.resolve("out-floats.npy"), OodEndToEndTest.floats(20, 0.6, 9));
    query = Files2.floats(tmp.resolve("query.npy"), OodEndToEndTest.floats(5, 0.1, 6));
    sampleA = Files2.floats(tmp.resolve("a.npy"), OodEndToEndTest.floats(30, 0.1, 7));
    sampleB = Files2.floats(tmp.resolve("b.npy"), OodEndToEndTest.floats(30, 0.3, 8));
    ok("build", "--out", idx.toString(), "--activations", train.toString());
    ok("ood", "calibrate", "--index", idx.toString(), "--activations", cal.toString(), "-k", "3", "--score", "code");
  }

  private static void ok(String... args) {
    Cli.Result r = Cli.run(args);
    assertThat(r.code()).as(r.describe()).isZero();
  }

  /** A command line whose output option names one of its inputs. */
  record Case(String option, Path input, String inputOption, String... args) {}

  private List<Case> cases() throws IOException {
    String i = idx.toString();
    Path link = tmp.resolve("link-to-a.npy");
    if (!Files.isSymbolicLink(link)) Files.createSymbolicLink(link, sampleA);
    Path dotted = tmp.resolve(".").resolve("b.npy");
    String[] eval = {"ood", "eval", "--index", i, "--in", in.toString(), "--out", out.toString(), "--kind", "activations",
        "--in-floats", floats.toString(), "--out-floats", outFloats.toString(), "--train-floats", train.toString()};
    List<Case> cases = new ArrayList<>();
    for (Path target : List.of(sampleA, link))
      cases.add(new Case("--out", sampleA, "--compare-a", "report", "--index", i, "--out", target.toString(), "--compare-a", sampleA.toString(),
          "--compare-b", sampleB.toString()));
    cases.add(new Case("--out", sampleB, "--compare-b", "report", "--index", i, "--out", dotted.toString(), "--compare-a", sampleA.toString(),
        "--compare-b", sampleB.toString()));
    cases.add(new Case("--roc", in, "--in", concat(eval, "--roc", in.toString())));
    cases.add(new Case("--html", out, "--out", concat(eval, "--html", out.toString())));
    cases.add(new Case("--roc", floats, "--in-floats", concat(eval, "--roc", tmp.resolve(".").resolve("floats.npy").toString())));
    cases.add(new Case("--html", train, "--train-floats", concat(eval, "--html", train.toString())));
    cases.add(new Case("--pairs", query, "--against", "dupes", "--index", i, "--radius", "2", "--against", query.toString(), "--pairs",
        query.toString()));
    return cases;
  }

  private static String[] concat(String[] a, String... b) {
    return Stream.concat(Stream.of(a), Stream.of(b)).toArray(String[]::new);
  }

  @Test
  void anOutputThatIsAnInputIsRefusedAndTheInputKeepsItsBytes() throws IOException {
    for (Case c : cases()) {
      Map<String, String> files = Files2.checksums(tmp);
      Cli.Result r = Cli.run(c.args());
      assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(r.err().strip()).as(r.describe()).doesNotContain("\n")
          .contains(c.option() + " is the same file as the input " + c.inputOption() + " (" + c.input() + ")");
      assertThat(r.out()).as(r.describe()).isEmpty();
      assertThat(Files2.checksums(tmp)).as(r.describe() + "\nevery file as it was, no temporary file left").isEqualTo(files);
    }
    // the same commands with an output of its own succeed (so the refusals above are about the file, not the command)
    for (Case c : cases()) {
      String[] args = c.args().clone();
      for (int k = 0; k < args.length - 1; k++) if (args[k].equals(c.option())) args[k + 1] = tmp.resolve("new" + k + ".out").toString();
      ok(args);
    }
  }

  /**
   * Two outputs of one command that name one path, or a C source folder that may not take the
   * files: 'ood eval --roc r --html r' wrote the CSV and then replaced it with the page (exit 0);
   * 'export-edge --out b --c-source b' wrote the bundle, then failed with an internal error (exit 1);
   * 'export-edge --c-source idx/c' wrote the bundle and made a folder inside the index before it
   * refused. Each is refused before anything is written: exit 2, one line naming both options.
   */
  @Test
  void outputsThatCollideOrMayNotBeWrittenAreRefusedBeforeAnyIsWritten() throws IOException {
    String i = idx.toString();
    Path r = tmp.resolve("r.csv"), bundle = tmp.resolve("b.edge"), c = tmp.resolve("c");
    String[] eval = {"ood", "eval", "--index", i, "--in", in.toString(), "--out", out.toString(), "--kind", "activations"};
    String[][] commands = {
        concat(eval, "--roc", r.toString(), "--html", r.toString()),
        concat(eval, "--roc", r.toString(), "--html", tmp.resolve(".").resolve("r.csv").toString()),
        {"export-edge", "--index", i, "--out", bundle.toString(), "--c-source", bundle.toString()},
        {"export-edge", "--index", i, "--out", c.resolve("actindex_edge.h").toString(), "--c-source", c.toString()},
        {"export-edge", "--index", i, "--out", bundle.toString(), "--c-source", idx.resolve("c").toString()},
    };
    String[][] mentions = {{"--roc", "--html"}, {"--roc", "--html"}, {"--out", "--c-source"}, {"--out", "--c-source"},
        {"--c-source", "index folder"}};
    Files.createDirectories(c);
    for (int n = 0; n < commands.length; n++) {
      Map<String, String> files = Files2.checksums(tmp);
      Cli.Result res = Cli.run(commands[n]);
      assertThat(res.code()).as(res.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(res.err().strip()).as(res.describe()).doesNotContain("\n").contains(mentions[n]);
      assertThat(res.out()).as(res.describe()).isEmpty();
      assertThat(Files2.checksums(tmp)).as(res.describe() + "\nevery file as it was, no temporary file left").isEqualTo(files);
      assertThat(idx.resolve("c")).as(res.describe()).doesNotExist();
    }
    // with outputs of their own, the same commands succeed
    ok(concat(eval, "--roc", r.toString(), "--html", tmp.resolve("r.html").toString()));
    ok("export-edge", "--index", i, "--out", bundle.toString(), "--c-source", c.toString());
  }

  /** 'build --out idx/sub' nested an index in an index; an existing non-empty folder stays refused as before. */
  @Test
  void aNewIndexInsideAnIndexFolderIsRefused() throws IOException {
    Map<String, String> before = Files2.checksums(idx);
    for (Path dir : List.of(idx.resolve("sub"), idx.resolve("meta").resolve("x"), idx.resolve("a").resolve("b"))) {
      Cli.Result r = Cli.run("build", "--out", dir.toString(), "--activations", in.toString());
      assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(r.err().strip()).as(r.describe()).doesNotContain("\n")
          .contains(dir + ": is inside the index folder " + idx.toAbsolutePath()).contains("--out");
      assertThat(dir).as(r.describe()).doesNotExist();
    }
    assertThat(Files2.checksums(idx)).isEqualTo(before);
    Path full = Files.createDirectories(tmp.resolve("full"));
    Files.writeString(full.resolve("notes.txt"), "mine");
    Cli.Result r = Cli.run("build", "--out", full.toString(), "--activations", in.toString());
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err()).as(r.describe()).contains("folder is not empty");
    assertThat(Files2.checksums(full)).containsOnlyKeys("notes.txt");
    // an index there (or what a killed build left: its lock and meta/) is named as such
    Cli.Result again = Cli.run("build", "--out", idx.toString(), "--activations", in.toString());
    assertThat(again.code()).as(again.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(again.err()).as(again.describe()).contains("folder is not empty").contains("it holds an index").contains("'add' grows an index");
    assertThat(r.err()).as(r.describe()).doesNotContain("holds an index");
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  /**
   * A 1-D array (one example saved without its batch axis) is refused by every reader of rows:
   * activations and codes to build from, query rows, an .npz layer. The files are written byte by
   * byte after the .npy format of NumPy's "numpy.lib.format" documentation (NEP 1), see
   * {@link Files2#rawNpy}.
   */
  @Test
  void oneDimensionalArraysAreRefusedWithTheShapesThatWouldDo() {
    Path vector = Files2.rawNpy(tmp.resolve("vector.npy"), Files2.NPY_MAGIC, "{'descr': '<f4', 'fortran_order': False, 'shape': (32,), }",
        Files2.f32(new float[32]));
    Path bits = Files2.rawNpy(tmp.resolve("bits.npy"), Files2.NPY_MAGIC, "{'descr': '|u1', 'fortran_order': False, 'shape': (32,), }",
        new byte[32]);
    Map<String, String> before = Files2.checksums(idx);
    String[][] commands = {
        {"build", "--out", tmp.resolve("v-idx").toString(), "--activations", vector.toString()},
        {"build", "--out", tmp.resolve("b-idx").toString(), "--codes", bits.toString()},
        {"nearest", "--index", idx.toString(), "--activations", vector.toString()},
        {"add", "--index", idx.toString(), "--activations", vector.toString()},
        {"ood", "score", "--index", idx.toString(), "--activations", vector.toString()},
    };
    for (String[] args : commands) {
      Cli.Result r = Cli.run(args);
      String file = args[args.length - 1];
      assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(r.err().strip()).as(r.describe()).doesNotContain("\n").contains(file + ": field 'shape' (32,) is a 1-D array")
          .contains("(1, 32) for one row").contains("(32, 1) for one column");
    }
    assertThat(tmp.resolve("v-idx")).doesNotExist();
    assertThat(tmp.resolve("b-idx")).doesNotExist();
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }
}
