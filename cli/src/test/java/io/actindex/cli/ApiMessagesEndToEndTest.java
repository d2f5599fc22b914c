package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.catchThrowable;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import io.actindex.core.BadInputException;
import io.actindex.edge.EdgeBundle;
import io.actindex.index.store.IndexReader;
import io.actindex.query.Compare;
import io.actindex.query.Delete;
import io.actindex.query.IndexBuilder;
import io.actindex.query.OodCalibrate;
import io.actindex.query.OodCalibration;
import io.actindex.query.OodScorer;
import io.actindex.query.QuerySource;
import io.actindex.query.Refine;
import io.actindex.query.RowRange;
import io.actindex.query.Source;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import java.util.function.Supplier;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The same situations through the Java API and through the command line: a library refusal, note or
 * warning names the Java parameter (in backquotes, never an option), and the command line prints
 * each of them exactly as it did before the library stopped writing options (the expected lines
 * below are the command line's words from before, character for character).
 */
class ApiMessagesEndToEndTest {
  private static final ObjectMapper JSON = new ObjectMapper();

  @TempDir Path tmp;

  private static float[][] floats(int n, int d, long seed) {
    SplittableRandom r = new SplittableRandom(seed);
    float[][] rows = new float[n][d];
    for (float[] row : rows)
      for (int j = 0; j < d; j++) row[j] = (float) (r.nextDouble() * 2 - 1);
    return rows;
  }

  private static boolean[][] bits(float[][] rows) {
    boolean[][] b = new boolean[rows.length][rows[0].length];
    for (int i = 0; i < rows.length; i++)
      for (int j = 0; j < rows[i].length; j++) b[i][j] = rows[i][j] > 0;
    return b;
  }

  private static String refusal(Runnable call) {
    Throwable t = catchThrowable(call::run);
    assertThat(t).isInstanceOf(BadInputException.class);
    return t.getMessage();
  }

  private static <T> T ok(Supplier<T> call) {
    return call.get();
  }

  private static void refused(Cli.Result r, String line) {
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err()).as(r.describe()).isEqualTo(line + System.lineSeparator());
  }

  private static void zero(Cli.Result r) {
    assertThat(r.code()).as(r.describe()).isZero();
  }

  /** What the library wrote: the Java name in backquotes, no option. */
  private static void javaNames(String message, String... names) {
    assertThat(message).doesNotContain("--");
    for (String n : names) assertThat(message).contains("`" + n + "`");
  }

  @Test
  void refusalsNameJavaParametersInTheApiAndOptionsOnTheCommandLine() throws Exception {
    Path train = Files2.floats(tmp.resolve("train.npy"), floats(40, 12, 1));
    Path q = Files2.floats(tmp.resolve("q.npy"), floats(30, 12, 2));
    Path qCodes = Files2.bits(tmp.resolve("q-codes.npy"), bits(floats(30, 12, 2)));
    Path codes = Files2.bits(tmp.resolve("codes.npy"), bits(floats(40, 12, 1)));
    Path idx = tmp.resolve("idx"), off = tmp.resolve("off"), cidx = tmp.resolve("cidx");
    zero(Cli.run("build", "--out", idx.toString(), "--activations", train.toString()));
    zero(Cli.run("build", "--out", off.toString(), "--activations", train.toString(), "--magnitudes", "off"));
    zero(Cli.run("build", "--out", cidx.toString(), "--codes", codes.toString()));

    // an index inside an index (core's OutputFiles, given the build's folder parameter)
    Path inner = idx.resolve("inner");
    javaNames(refusal(() -> IndexBuilder.build(new IndexBuilder.BuildParams(inner, Source.activations(train), null), null)), "BuildParams.dir");
    refused(Cli.run("build", "--out", inner.toString(), "--activations", train.toString()), "actindex build: " + inner + ": is inside the index folder "
        + idx.toAbsolutePath().normalize() + "; an index cannot hold another index: give --out a folder outside it");

    // refinement asked of codes
    try (IndexReader r = IndexReader.open(idx)) {
      String m = refusal(() -> QuerySource.loadWithActivations(r, Source.codes(qCodes), RowRange.ALL, null));
      javaNames(m, "Source.activations", "Source.inputs");
      assertThat(m).isEqualTo(qCodes + ": refinement needs the queries' activations (`Source.activations`) or inputs (`Source.inputs`), not codes");
    }
    refused(Cli.run("nearest", "--index", idx.toString(), "--codes", qCodes.toString(), "--refine", "cosine"),
        "actindex nearest: " + qCodes + ": refinement needs the queries' activations (--activations) or inputs (--inputs), not codes");

    // no kept magnitudes: a name the command line spells otherwise, with a value it spells otherwise
    try (IndexReader r = IndexReader.open(off)) {
      javaNames(Refine.noMagnitudes(r), "magnitudeBits 0", "magnitudeBits");
    }
    refused(Cli.run("nearest", "--index", off.toString(), "--activations", q.toString(), "--refine", "cosine"), "actindex nearest: --refine: index "
        + off + " keeps no magnitudes to refine with: it was built with --magnitudes off; build it again with --magnitudes 8 (the default for"
        + " activations and inputs)");

    // a key that is not there
    Path keys = Files2.text(tmp.resolve("keys.txt"), List.of("row-1", "row-999"));
    javaNames(refusal(() -> Delete.run(new Delete.Params(cidx, keys, null))), "skipMissing");
    refused(Cli.run("delete", "--index", cidx.toString(), "--keys", keys.toString()), "actindex delete: keys file " + keys
        + " line 2: 'row-999' is not a live example of the index (never added, or deleted already); nothing deleted (--skip-missing deletes the"
        + " others and names these)");

    // a sample's filter, named by the sample (Compare builds the name from "a" or "b")
    Compare.Params where = new Compare.Params(idx, Compare.Sample.where("key = row-1"), Compare.Sample.where("key = row-2"), null, null, null,
        null, null, null, Compare.Options.defaults(), null);
    String m1 = refusal(() -> Compare.run(where, null));
    javaNames(m1, "a.where");
    assertThat(m1).isEqualTo("`a.where` 'key = row-1' matches 1 of the 40 live examples; sample A needs at least 2");
    refused(Cli.run("compare", "--index", idx.toString(), "--a-where", "key = row-1", "--b-where", "key = row-2"),
        "actindex compare: --a-where 'key = row-1' matches 1 of the 40 live examples; sample A needs at least 2");

    // a score the stored calibration was not made for: three names in one message
    Path held = Files2.bits(tmp.resolve("held.npy"), bits(floats(30, 12, 3)));
    zero(Cli.run("ood", "calibrate", "--index", cidx.toString(), "--codes", held.toString(), "-k", "3"));
    try (IndexReader r = IndexReader.open(cidx)) {
      String m = refusal(() -> OodCalibration.scorer(r, OodCalibration.load(r), OodScorer.Kind.REFINED));
      javaNames(m, "score");
      assertThat(m).startsWith("`score` refined: ").endsWith(" first, or drop `score`");
    }
    refused(Cli.run("ood", "score", "--index", cidx.toString(), "--codes", qCodes.toString(), "--score", "refined"), "actindex ood score: --score"
        + " refined: the calibration stored in " + cidx + " uses the code score; run 'actindex ood calibrate --score refined' first, or drop --score");
  }

  @Test
  void notesAndWarningsNameJavaParametersInTheApiAndOptionsOnTheCommandLine() throws Exception {
    float[][] t = floats(40, 12, 4);
    Path train = Files2.floats(tmp.resolve("train.npy"), t);
    List<String> csv = new ArrayList<>();
    csv.add("a,b,c,d,e,f,g,h,i,j,k,l");
    for (float[] row : floats(25, 12, 5)) {
      StringBuilder sb = new StringBuilder();
      for (float v : row) sb.append(sb.isEmpty() ? "" : ",").append(v);
      csv.add(sb.toString());
    }
    Path q = Files2.text(tmp.resolve("q.csv"), csv);
    String headerNote = q + ": line 1 taken as the header (every cell is text; --header no reads it as data)";
    Path idx = tmp.resolve("idx");

    // how a CSV file was read: the build's JSON notes and stderr, a query's stderr
    Path viaApi = tmp.resolve("via-api");
    IndexBuilder.Result built = ok(() -> IndexBuilder.build(new IndexBuilder.BuildParams(viaApi, Source.activations(q), null), null));
    assertThat(built.notes()).contains(q + ": line 1 taken as the header (every cell is text; `header` no reads it as data)");
    built.notes().forEach(n -> assertThat(n).doesNotContain("--"));
    Cli.Result json = Cli.run("build", "--out", tmp.resolve("b1").toString(), "--activations", q.toString(), "--format", "json");
    zero(json);
    assertThat(JSON.readTree(json.out()).get("notes").get(0).asText()).isEqualTo(headerNote);
    Cli.Result table = Cli.run("build", "--out", tmp.resolve("b2").toString(), "--activations", q.toString());
    zero(table);
    assertThat(table.err()).isEqualTo(headerNote + System.lineSeparator());

    zero(Cli.run("build", "--out", idx.toString(), "--activations", train.toString()));
    try (IndexReader r = IndexReader.open(idx)) {
      javaNames(QuerySource.load(r, Source.activations(q), RowRange.ALL).notes().getFirst(), "header");
    }
    Cli.Result near = Cli.run("nearest", "--index", idx.toString(), "--activations", q.toString(), "-k", "2", "--format", "json");
    zero(near);
    assertThat(near.err()).isEqualTo(headerNote + System.lineSeparator());

    // calibrating on the training rows: a warning, on stderr and in the JSON document
    String overlap = "; --check-overlap refuses such a file)";
    OodCalibrate.Result cal = OodCalibrate.run(idx, Source.activations(train), RowRange.ALL,
        new OodCalibrate.Params(3, EdgeBundle.Statistic.KTH, 0.95, null, false), null);
    assertThat(cal.warnings()).hasSize(1);
    javaNames(cal.warnings().getFirst(), "checkOverlap");
    Cli.Result calibrated = Cli.run("ood", "calibrate", "--index", idx.toString(), "--activations", train.toString(), "-k", "3", "--format", "json");
    zero(calibrated);
    JsonNode warnings = JSON.readTree(calibrated.out()).get("warnings");
    assertThat(warnings).hasSize(1);
    assertThat(warnings.get(0).asText()).isEqualTo(cal.warnings().getFirst().replace("; `checkOverlap` refuses such a file)", overlap)).endsWith(overlap);
    assertThat(calibrated.err()).isEqualTo("warning: " + warnings.get(0).asText() + System.lineSeparator());

    // compare's subsample note and its missing floats, in the JSON document
    Path codesA = Files2.bits(tmp.resolve("a.npy"), bits(t)), codesB = Files2.bits(tmp.resolve("b.npy"), bits(floats(25, 12, 6)));
    Compare.Options o = Compare.Options.defaults();
    Compare.Options few = new Compare.Options(200, o.seed(), o.sigma(), o.alpha(), o.top(), 5, o.exactMax(), o.sinkhornRows(), o.reg(), o.maxIter(),
        o.tol(), 1);
    Compare.Result c = Compare.run(new Compare.Params(null, Compare.Sample.file(Source.codes(codesA)), Compare.Sample.file(Source.codes(codesB)),
        null, null, null, null, null, null, few, null), null);
    javaNames(c.floatsAbsent(), "aFloats", "bFloats");
    String subsample = c.notes().stream().filter(n -> n.contains("subsample")).findFirst().orElseThrow();
    javaNames(subsample, "matrixRows");
    Cli.Result compared = Cli.run("compare", "--a", codesA.toString(), "--b", codesB.toString(), "--kind", "codes", "--matrix-rows", "5",
        "--permutations", "200", "--format", "json");
    zero(compared);
    JsonNode doc = JSON.readTree(compared.out());
    assertThat(doc.get("floats_absent").asText()).isEqualTo("no float activations for A and B (give --a-floats/--b-floats, or activations files)");
    assertThat(doc.get("notes").get(0).asText())
        .isEqualTo("exponential and Gaussian kernels: a seeded random subsample of 5 of 40 (A) and 5 of 25 (B) rows (--matrix-rows 5)");
  }
}
