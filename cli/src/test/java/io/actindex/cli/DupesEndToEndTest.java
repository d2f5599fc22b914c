package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.Reference.Example;
import io.actindex.cli.Reference.Layer;
import io.actindex.core.Randoms;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.RepeatedTest;
import org.junit.jupiter.api.RepetitionInfo;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code build} then {@code dupes} through the command line: the {@code --pairs} CSV equals the
 * test's O(n^2) join (with {@code --where} and {@code --layers}), the JSON summary counts agree,
 * {@code --against} equals a per-row radius search, and bad input exits 2 leaving the index
 * byte-identical.
 */
class DupesEndToEndTest {
  @TempDir Path tmp;

  static final String LAYOUT = NearestEndToEndTest.LAYOUT;
  static final List<Layer> ALL = NearestEndToEndTest.LAYERS;

  /** ReLU-like or uniform codes with planted exact and near copies. */
  static boolean[][] planted(boolean[][] codes, SplittableRandom rnd) {
    boolean[][] out = new boolean[codes.length][];
    for (int i = 0; i < codes.length; i++) out[i] = codes[i].clone();
    for (int i = 0; i < codes.length / 6; i++) {
      int to = rnd.nextInt(codes.length);
      out[to] = out[rnd.nextInt(codes.length)].clone();
      for (int f = rnd.nextInt(4); f > 0; f--) {
        int b = rnd.nextInt(out[to].length);
        out[to][b] = !out[to][b];
      }
    }
    return out;
  }

  Path build(boolean[][] codes, List<Example> ex) {
    Path idx = tmp.resolve("idx");
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("codes.npy"), codes).toString(),
        "--code-layout", LAYOUT, "--meta", NearestEndToEndTest.metaCsv(tmp.resolve("meta.csv"), ex).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    return idx;
  }

  @RepeatedTest(3)
  void pairsFileAndSummaryEqualBruteForce(RepetitionInfo rep) throws Exception {
    long seed = Randoms.seed(rep.getCurrentRepetition());
    SplittableRandom rnd = new SplittableRandom(seed);
    boolean relu = rep.getCurrentRepetition() % 2 == 1;
    NearestEndToEndTest.Data d = NearestEndToEndTest.data(300, 1, 40, relu, seed);
    boolean[][] codes = planted(d.index(), rnd);
    List<Example> ex = NearestEndToEndTest.examples(codes, 0, "a", seed);
    Path idx = build(codes, ex);
    for (int radius : new int[] {0, 2, 5}) {
      for (String variant : new String[] {"all", "where", "layers"}) {
        String what = Randoms.describe(seed) + " R=" + radius + " " + variant + (relu ? " relu" : " uniform");
        List<Layer> on = variant.equals("layers") ? List.of(ALL.get(0)) : ALL;
        List<String> want = new ArrayList<>(List.of("id_a,id_b,distance"));
        for (int a = 0; a < codes.length; a++)
          for (int b = a + 1; b < codes.length; b++) {
            if (variant.equals("where") && !(ex.get(a).meta().get("split").equals("train") && ex.get(b).meta().get("split").equals("train")))
              continue;
            int dist = Reference.distance(codes[a], codes[b], on);
            if (dist <= radius) want.add(a + "," + b + "," + dist);
          }
        Path pairs = tmp.resolve("pairs.csv");
        List<String> args = new ArrayList<>(List.of("dupes", "--index", idx.toString(), "--radius", "" + radius, "--format", "json",
            "--pairs", pairs.toString(), "--threads", "2", "--groups", "3"));
        if (variant.equals("where")) args.addAll(List.of("--where", "split = train"));
        if (variant.equals("layers")) args.addAll(List.of("--layers", "h1"));
        JsonNode doc = NearestEndToEndTest.json(args.toArray(new String[0]));
        List<String> lines = Files.readAllLines(pairs);
        assertThat(lines.get(0)).as(what).isEqualTo("id_a,id_b,distance");
        List<String> sorted = new ArrayList<>(lines.subList(1, lines.size()));
        sorted.sort(java.util.Comparator.comparingInt((String l) -> Integer.parseInt(l.split(",")[0]))
            .thenComparingInt(l -> Integer.parseInt(l.split(",")[1])));
        sorted.add(0, lines.get(0));
        assertThat(sorted).as(what).isEqualTo(want);
        JsonNode s = doc.get("summary");
        assertThat(s.get("pairs").asLong()).as(what).isEqualTo(want.size() - 1);
        assertThat(s.get("pairs_written").asLong()).as(what).isEqualTo(want.size() - 1);
        assertThat(s.get("radius").asInt()).as(what).isEqualTo(radius);
        assertThat(s.get("bits").asInt()).as(what).isEqualTo(variant.equals("layers") ? 40 : 64);
        assertThat(doc.get("groups").size()).as(what).isLessThanOrEqualTo(3);
        for (JsonNode g : doc.get("groups")) assertThat(g.get("size").asInt()).as(what).isLessThanOrEqualTo(s.get("largest_group").asInt());
      }
    }
    Cli.Result table = Cli.run("dupes", "--index", idx.toString(), "--radius", "2");
    assertThat(table.code()).as(table.describe()).isZero();
    assertThat(table.out()).containsPattern("summary +value\\R").contains("exact duplicate pairs").contains("groups spanning splits (leakage)");
    Cli.Result csv = Cli.run("dupes", "--index", idx.toString(), "--radius", "2", "--format", "csv", "--cross-split");
    assertThat(csv.code()).as(csv.describe()).isZero();
    assertThat(csv.out()).startsWith("group,size,distinct_codes,max_distance,cross_split,conflicting_labels,labels,splits,keys");
    for (String line : csv.out().strip().split("\n")) if (!line.startsWith("group,")) assertThat(line).contains(",true,");
    // the list cells (";"-separated, docs/commands/README.md) hold what the JSON lists
    JsonNode groups = NearestEndToEndTest.json("dupes", "--index", idx.toString(), "--radius", "2", "--format", "json", "--cross-split")
        .get("groups");
    List<String[]> rows = CsvCells.rows(csv.out());
    assertThat(rows).hasSize(groups.size()).isNotEmpty();
    for (int i = 0; i < rows.size(); i++) {
      JsonNode g = groups.get(i);
      String[] row = rows.get(i);
      Map<String, Integer> labels = new java.util.LinkedHashMap<>(), splits = new java.util.LinkedHashMap<>();
      g.get("labels").fields().forEachRemaining(f -> labels.put(f.getKey(), f.getValue().asInt()));
      g.get("splits").fields().forEachRemaining(f -> splits.put(f.getKey(), f.getValue().asInt()));
      assertThat(CsvCells.counts(row[6])).as("group " + i + " labels").containsExactlyEntriesOf(labels);
      assertThat(CsvCells.counts(row[7])).as("group " + i + " splits").containsExactlyEntriesOf(splits).hasSizeGreaterThan(1);
      assertThat(CsvCells.items(row[8])).as("group " + i + " keys").isEqualTo(g.get("members").findValuesAsText("key"));
    }
  }

  /**
   * --against on an index built from a model takes the model's inputs or its hidden activations by
   * the file's width, as compare does, and --kind says which when the width fits both. Hidden
   * activations were read as inputs and refused ("rows have 4 values but the model ... takes 3").
   */
  @Test
  void againstAModelsIndexTakesHiddenActivationsByTheirWidth() {
    SplittableRandom r = new SplittableRandom(Randoms.seed(405));
    Path idx = tmp.resolve("m");
    String train = Files2.floats(tmp.resolve("in.npy"), SourcesEndToEndTest.activations(40, 3, r)).toString();
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--model", CompareEndToEndTest.mlp(tmp.resolve("m.safetensors"), 3, r).toString(),
        "--inputs", train);
    assertThat(built.code()).as(built.describe()).isZero();
    String hidden = Files2.floats(tmp.resolve("h.npy"), SourcesEndToEndTest.activations(10, 4, r)).toString();
    String[] args = {"dupes", "--index", idx.toString(), "--radius", "1", "--against", hidden, "--format", "csv"};
    Cli.Result inferred = Cli.run(args);
    assertThat(inferred.code()).as(inferred.describe()).isZero();
    Cli.Result told = Cli.run(concat(args, "--kind", "activations"));
    assertThat(inferred.out()).as(told.describe()).isEqualTo(told.out());
    Cli.Result inputs = Cli.run("dupes", "--index", idx.toString(), "--radius", "1", "--against", train, "--format", "csv");
    assertThat(inputs.code()).as(inputs.describe()).isZero();
    assertThat(inputs.out()).isEqualTo(Cli.run("dupes", "--index", idx.toString(), "--radius", "1", "--against", train, "--format", "csv",
        "--kind", "inputs").out());
    Cli.Result alone = Cli.run("dupes", "--index", idx.toString(), "--radius", "1", "--kind", "inputs");
    assertThat(alone.code()).as(alone.describe()).isEqualTo(2);
    assertThat(alone.err()).as(alone.describe()).contains("--kind says what the --against file holds");
  }

  private static String[] concat(String[] a, String... b) {
    String[] out = java.util.Arrays.copyOf(a, a.length + b.length);
    System.arraycopy(b, 0, out, a.length, b.length);
    return out;
  }

  @Test
  void againstEqualsPerRowRadiusSearch() throws Exception {
    long seed = Randoms.seed(9);
    SplittableRandom rnd = new SplittableRandom(seed);
    NearestEndToEndTest.Data d = NearestEndToEndTest.data(300, 1, 60, true, seed);
    boolean[][] codes = planted(d.index(), rnd);
    boolean[][] queries = d.queries();
    for (int i = 0; i < 20; i++) queries[i] = codes[rnd.nextInt(codes.length)].clone();
    Path idx = build(codes, NearestEndToEndTest.examples(codes, 0, "a", seed));
    Path q = Files2.bits(tmp.resolve("q.npy"), queries), pairs = tmp.resolve("m.csv");
    int radius = 3;
    JsonNode doc = NearestEndToEndTest.json("dupes", "--index", idx.toString(), "--radius", "" + radius, "--against", q.toString(),
        "--pairs", pairs.toString(), "--format", "json");
    List<String> want = new ArrayList<>(List.of("row,id,distance"));
    int rowsWith = 0;
    for (int r = 0; r < queries.length; r++) {
      boolean any = false;
      for (int id = 0; id < codes.length; id++) {
        int dist = Reference.distance(queries[r], codes[id], ALL);
        if (dist <= radius) {
          want.add(r + "," + id + "," + dist);
          any = true;
        }
      }
      if (any) rowsWith++;
    }
    assertThat(Files.readAllLines(pairs)).as(Randoms.describe(seed)).isEqualTo(want);
    assertThat(doc.get("summary").get("rows_with_matches").asInt()).isEqualTo(rowsWith);
    assertThat(doc.get("summary").get("rows_without").asInt()).isEqualTo(queries.length - rowsWith);
    assertThat(doc.get("rows").size()).isEqualTo(rowsWith);
  }

  /**
   * Labels in a column of another name (scikit-learn's data frames call it {@code target}) are not
   * labels: the build notes it, and dupes' "0 groups with conflicting labels" comes with a line
   * saying that no example has a label; named with --label-column, the same rows conflict.
   */
  @Test
  void labelsUnderAnotherNameAreNotedInsteadOfReadingAsNoConflict() throws Exception {
    boolean[][] codes = new boolean[6][8];
    for (int i = 0; i < 6; i++) codes[i][i % 3] = true; // rows i and i + 3 share a code
    Path npy = Files2.bits(tmp.resolve("c.npy"), codes);
    Path meta = Files2.text(tmp.resolve("m.csv"), List.of("key,target", "a,0", "b,0", "c,0", "d,1", "e,1", "f,1"));
    for (boolean named : new boolean[] {false, true}) {
      Path idx = tmp.resolve("idx-" + named);
      List<String> args = new ArrayList<>(List.of("build", "--out", idx.toString(), "--codes", npy.toString(), "--meta", meta.toString()));
      if (named) args.addAll(List.of("--label-column", "target"));
      Cli.Result b = Cli.run(args.toArray(String[]::new));
      assertThat(b.code()).as(b.describe()).isZero();
      assertThat(b.err().contains("no example has a label")).as(b.describe()).isEqualTo(!named);
      assertThat(b.err().contains("column 'target' looks like one: name it with --label-column")).as(b.describe()).isEqualTo(!named);
      Cli.Result d = Cli.run("dupes", "--index", idx.toString(), "--radius", "0", "--conflicting-labels", "--format", "json");
      assertThat(d.code()).as(d.describe()).isZero();
      int conflicts = io.actindex.cli.format.JsonWriterTest.STRICT.readTree(d.out()).get("summary").get("conflicting_groups").asInt();
      assertThat(conflicts).as(d.describe()).isEqualTo(named ? 3 : 0);
      assertThat(d.err().contains("no example in " + idx + " has a label")).as(d.describe()).isEqualTo(!named);
    }
  }

  /**
   * A continuous target given as the label (a new user's house prices, written to 5 decimals, every
   * one distinct): each near-duplicate pair of two prices was a "label conflict" with no word why.
   * The build now notes that most labels are written by no other row; class labels get no note, and
   * the dupes answer is the same either way (24 of 24 groups conflict: labels are compared as text).
   */
  @Test
  void aContinuousTargetAsTheLabelIsNoted() throws Exception {
    boolean[][] codes = new boolean[48][11];
    for (int i = 0; i < 48; i++) codes[i][i % 24 % 8] = codes[i][8 + i % 24 / 8] = true; // rows i and i + 24 share a code, 24 codes
    Path npy = Files2.bits(tmp.resolve("c.npy"), codes);
    for (boolean prices : new boolean[] {true, false}) {
      List<String> lines = new ArrayList<>(List.of("key,label"));
      for (int i = 0; i < 48; i++) lines.add("k" + i + "," + (prices ? String.format(java.util.Locale.ROOT, "%.5f", 1.5 + i * 0.37) : i < 24 ? "cat" : "dog"));
      Path meta = Files2.text(tmp.resolve("m-" + prices + ".csv"), lines), idx = tmp.resolve("idx-" + prices);
      Cli.Result b = Cli.run("build", "--out", idx.toString(), "--codes", npy.toString(), "--meta", meta.toString());
      assertThat(b.code()).as(b.describe()).isZero();
      assertThat(b.err().contains(meta + ": note: 48 of the 48 labels are written by no other row (a continuous target")).as(b.describe())
          .isEqualTo(prices);
      Cli.Result d = Cli.run("dupes", "--index", idx.toString(), "--radius", "0", "--format", "json");
      assertThat(io.actindex.cli.format.JsonWriterTest.STRICT.readTree(d.out()).get("summary").get("conflicting_groups").asInt()).as(d.describe())
          .isEqualTo(24);
    }
  }

  /** A label column named in another case ({@code Label}) or {@code y} is named in the build's note; other columns are not. */
  @Test
  void theNoLabelNoteNamesColumnsNamedLikeALabel() throws Exception {
    boolean[][] codes = new boolean[3][8];
    for (int i = 0; i < 3; i++) codes[i][i] = true;
    Path npy = Files2.bits(tmp.resolve("c.npy"), codes);
    Path named = Files2.text(tmp.resolve("m1.csv"), List.of("key,Label,y,colour", "a,0,1,red", "b,1,0,blue", "c,0,1,red"));
    Path other = Files2.text(tmp.resolve("m2.csv"), List.of("key,colour", "a,red", "b,blue", "c,red"));
    for (Path meta : List.of(named, other)) {
      Cli.Result b = Cli.run("build", "--out", tmp.resolve("idx-" + meta.getFileName()).toString(), "--codes", npy.toString(),
          "--meta", meta.toString());
      assertThat(b.code()).as(b.describe()).isZero();
      assertThat(b.err()).as(b.describe()).contains("no example has a label");
      if (meta == named) assertThat(b.err()).as(b.describe()).contains("column 'Label', 'y' look like one: name it with --label-column");
      else assertThat(b.err()).as(b.describe()).doesNotContain("like one");
    }
  }

  @Test
  void badInputExitsTwoAndLeavesTheIndexUnchanged() throws Exception {
    SplittableRandom rnd = new SplittableRandom(5);
    NearestEndToEndTest.Data d = NearestEndToEndTest.data(50, 1, 3, false, 5);
    Path idx = build(d.index(), NearestEndToEndTest.examples(d.index(), 0, "a", 5));
    Map<String, String> before = Files2.checksums(idx);
    boolean[][] narrow = new boolean[3][63];
    for (boolean[] row : narrow) for (int b = 0; b < row.length; b++) row[b] = rnd.nextBoolean();
    Path wrong = Files2.bits(tmp.resolve("narrow.npy"), narrow);
    String[][] cases = {
      {"--radius", "-1"},
      {"--radius", "65"},
      {"--radius", "41", "--layers", "h1"},
      {"--radius", "2", "--where", "no_such_column = x"},
      {"--radius", "2", "--layers", "h9"},
      {"--radius", "2", "--against", wrong.toString()},
      {"--radius", "2", "--against", tmp.resolve("missing.npy").toString()},
    };
    for (String[] c : cases) {
      List<String> args = new ArrayList<>(List.of("dupes", "--index", idx.toString(), "--pairs", tmp.resolve("p.csv").toString()));
      args.addAll(List.of(c));
      Cli.Result r = Cli.run(args.toArray(new String[0]));
      assertThat(r.code()).as(r.describe()).isEqualTo(2);
      assertThat(r.err().strip().lines().count()).as(r.describe()).isEqualTo(1);
      assertThat(Files.exists(tmp.resolve("p.csv"))).as(r.describe()).isFalse();
      assertThat(Files2.checksums(idx)).as(r.describe()).isEqualTo(before);
    }
  }

  /** --pairs onto a folder was an internal error (exit 1); into a missing folder it named the temporary file. */
  @Test
  void pairsOntoAFolderOrIntoAMissingFolderIsRefused() throws Exception {
    NearestEndToEndTest.Data d = NearestEndToEndTest.data(20, 1, 3, false, 7);
    Path idx = build(d.index(), NearestEndToEndTest.examples(d.index(), 0, "a", 7));
    Map<String, String> before = Files2.checksums(idx);
    Path folder = Files.createDirectories(tmp.resolve("a-folder"));
    for (Path target : List.of(folder, tmp.resolve("missing").resolve("p.csv"))) {
      Cli.Result r = Cli.run("dupes", "--index", idx.toString(), "--radius", "1", "--pairs", target.toString());
      assertThat(r.code()).as(r.describe()).isEqualTo(2);
      assertThat(r.err().strip().lines().count()).as(r.describe()).isEqualTo(1);
      assertThat(r.err()).as(r.describe()).contains(target.toString()).doesNotContain(".tmp");
      assertThat(Files2.checksums(idx)).as(r.describe()).isEqualTo(before);
    }
    assertThat(Files.isDirectory(folder)).isTrue();
  }

  /** The command list shows each command's first description line; dupes' and compare's were cut mid-sentence. */
  @Test
  void commandListSummariesAreWholeSentences() {
    Cli.Result r = Cli.run("--help");
    String flat = r.out().replaceAll("\\s+", " ");
    assertThat(flat).as(r.describe()).contains("grouped into connected components").contains("Wasserstein-2 with Hamming");
  }
}
