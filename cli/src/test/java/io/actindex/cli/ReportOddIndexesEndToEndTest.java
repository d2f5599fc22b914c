package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import io.actindex.query.report.HtmlPage;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code report} on unusual but real indexes (one example, 1-bit codes, every code identical, five
 * layers): the page's per-prefix table agrees with {@code census --format json}, every bar of the
 * regions chart has a height, and an example with no other to measure against is said, not dropped
 * silently; what the page cannot count (leaks without splits, conflicts without labels, anything
 * in an index with no live example) is said rather than shown as 0.
 */
class ReportOddIndexesEndToEndTest {
  @TempDir Path tmp;
  static final ObjectMapper JSON = new ObjectMapper();

  @Test
  void pageAgreesWithTheCensusOnOddIndexes() throws Exception {
    SplittableRandom rnd = new SplittableRandom(5);
    boolean[][] one = {{true, false, true}};
    boolean[][] oneBit = new boolean[30][1], same = new boolean[20][16], five = new boolean[40][140];
    for (boolean[] r : oneBit) r[0] = rnd.nextBoolean();
    for (boolean[] r : same) java.util.Arrays.fill(r, true);
    for (boolean[] r : five) for (int j = 0; j < r.length; j++) r[j] = rnd.nextInt(4) == 0;
    Object[][] cases = {{"one", one, null}, {"onebit", oneBit, null}, {"same", same, null}, {"five", five, "a:3,b:7,c:1,d:64,e:65"}};
    for (Object[] c : cases) {
      String name = (String) c[0];
      Path codes = Files2.bits(tmp.resolve(name + ".npy"), (boolean[][]) c[1]), idx = tmp.resolve(name), page = tmp.resolve(name + ".html");
      List<String> build = new ArrayList<>(List.of("build", "--out", idx.toString(), "--codes", codes.toString()));
      if (c[2] != null) build.addAll(List.of("--code-layout", (String) c[2]));
      Cli.Result b = Cli.run(build.toArray(String[]::new));
      assertThat(b.code()).as(b.describe()).isZero();
      Cli.Result r = Cli.run("report", "--index", idx.toString(), "--out", page.toString());
      assertThat(r.code()).as(r.describe()).isZero();
      Cli.Result census = Cli.run("census", "--index", idx.toString(), "--format", "json");
      assertThat(census.code()).as(census.describe()).isZero();
      String html = Files.readString(page);
      JsonNode prefixes = JSON.readTree(census.out()).get("prefixes");
      String purity = section(html, "purity");
      for (JsonNode p : prefixes) {
        List<String> layers = new ArrayList<>();
        p.get("layers").forEach(l -> layers.add(l.asText()));
        assertThat(purity).as(name).contains("<tr><td class=\"l\">" + String.join("+", layers) + "</td><td>" + p.get("bits").asInt() + "</td><td>"
            + p.get("regions").asInt() + "</td><td>" + p.get("singletons").asInt() + "</td><td>"
            + HtmlPage.num(p.get("examples_per_region").get("p50").asDouble()) + "</td>");
      }
      Matcher bar = Pattern.compile("height=\"([0-9.]+)\"><title>").matcher(section(html, "regions"));
      int bars = 0;
      while (bar.find()) {
        bars++;
        assertThat(Double.parseDouble(bar.group(1))).as(name + ": a bar of the regions chart").isPositive();
      }
      assertThat(bars).as(name).isPositive();
      String nearest = section(html, "nearest-other");
      if (name.equals("one")) assertThat(nearest).contains("1 live example has no other live example");
      else assertThat(nearest).doesNotContain("no other live example");
    }
  }

  /** The comparison's W2 row says whether it is exact (equal sizes) or Sinkhorn's upper bound (unequal sizes). */
  @Test
  void theComparisonSaysHowW2WasComputed() throws Exception {
    SplittableRandom rnd = new SplittableRandom(9);
    boolean[][] train = new boolean[60][24], a = new boolean[20][24], b = new boolean[20][24], c = new boolean[25][24];
    for (boolean[][] m : List.of(train, a, b, c)) for (boolean[] r : m) for (int j = 0; j < r.length; j++) r[j] = rnd.nextInt(3) == 0;
    Path idx = tmp.resolve("cmp");
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("train.npy"), train).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    String[][] cases = {{"b.npy", "(bits, exact)"}, {"c.npy", "(bits, Sinkhorn: an upper bound)"}};
    Files2.bits(tmp.resolve("b.npy"), b);
    Files2.bits(tmp.resolve("c.npy"), c);
    Path sampleA = Files2.bits(tmp.resolve("a.npy"), a);
    for (String[] k : cases) {
      Path page = tmp.resolve(k[0] + ".html");
      Cli.Result r = Cli.run("report", "--index", idx.toString(), "--out", page.toString(), "--compare-a", sampleA.toString(),
          "--compare-b", tmp.resolve(k[0]).toString());
      assertThat(r.code()).as(r.describe()).isZero();
      assertThat(section(Files.readString(page), "compare")).as(k[0]).contains("W2 with Hamming ground cost " + k[1]);
    }
  }

  /**
   * The near-duplicates section shows the numbers {@code dupes --format json} prints, says how many
   * of the groups it lists, and, where no live example has a split (or a label), says so instead of
   * a 0 that reads as "no leak" (or "no conflict").
   */
  @Test
  void dupesSectionAgreesWithDupesAndSaysWhatItCannotCount() throws Exception {
    SplittableRandom rnd = new SplittableRandom(13);
    boolean[][] codes = new boolean[36][20]; // rows 2g and 2g+1 share a code: 18 groups of two
    for (int g = 0; g < 18; g++) for (int j = 0; j < 20; j++) codes[2 * g][j] = codes[2 * g + 1][j] = rnd.nextBoolean();
    Path file = Files2.bits(tmp.resolve("dup.npy"), codes);
    String[] metas = {"key,label,split", "key,label", "key,line"};
    for (String header : metas) {
      StringBuilder csv = new StringBuilder(header).append('\n');
      for (int i = 0; i < codes.length; i++) { // label a/b (a conflict where a pair mixes them); split test for even groups (a leak)
        String second = header.endsWith("line") ? (i % 3 == 0 ? "L1" : "L2") : i % 3 == 0 ? "a" : "b";
        csv.append("k").append(i).append(',').append(second).append(header.endsWith("split") ? (i % 4 == 0 ? ",test" : ",train") : "").append('\n');
      }
      String name = header.replace(',', '-');
      Path idx = tmp.resolve(name), page = tmp.resolve(name + ".html");
      Cli.Result b = Cli.run("build", "--out", idx.toString(), "--codes", file.toString(), "--meta",
          Files2.write(tmp.resolve(name + ".csv"), csv.toString().getBytes(java.nio.charset.StandardCharsets.UTF_8)).toString());
      assertThat(b.code()).as(b.describe()).isZero();
      Cli.Result r = Cli.run("report", "--index", idx.toString(), "--out", page.toString(), "--dupes-radius", "0");
      assertThat(r.code()).as(r.describe()).isZero();
      Cli.Result d = Cli.run("dupes", "--index", idx.toString(), "--radius", "0", "--format", "json");
      assertThat(d.code()).as(d.describe()).isZero();
      JsonNode s = JSON.readTree(d.out()).get("summary");
      if (header.equals("key,label,split")) assertThat(s.get("cross_split_groups").asInt()).isPositive();
      if (header.contains("label")) assertThat(s.get("conflicting_groups").asInt()).isPositive();
      String html = section(Files.readString(page), "dupes");
      String[][] rows = {{"examples joined", "examples"}, {"pairs within the radius", "pairs"}, {"exact duplicate pairs (distance 0)", "exact_duplicate_pairs"},
          {"groups", "groups"}, {"largest group", "largest_group"}, {"examples in groups", "examples_in_groups"}};
      for (String[] row : rows) assertThat(html).as(name).contains("<td class=\"l\">" + row[0] + "</td><td>" + s.get(row[1]).asInt() + "</td>");
      assertThat(html).as(name).contains("The largest groups (10 of " + s.get("groups").asInt() + " listed)")
          .contains("The 10 listed groups (of " + s.get("groups").asInt() + ") by size");
      String leak = "<td class=\"l\">groups spanning splits (leakage)</td><td>", conflict = "<td class=\"l\">groups with conflicting labels</td><td>";
      assertThat(html).as(name).contains(header.contains("split") ? leak + s.get("cross_split_groups").asInt() + "</td>" : leak + "no live example has a split</td>");
      assertThat(html).as(name).contains(header.contains("label") ? conflict + s.get("conflicting_groups").asInt() + "</td>" : conflict + "no live example has a label</td>");
    }
  }

  /** An index whose examples were all deleted: the page says at its top that there is nothing to count. */
  @Test
  void anIndexWithNoLiveExampleSaysSo() throws Exception {
    Path idx = tmp.resolve("gone"), page = tmp.resolve("gone.html"), keys = Files2.write(tmp.resolve("keys.txt"), "row-0\nrow-1\n".getBytes());
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("gone.npy"), new boolean[][] {{true, false}, {false, true}}).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    Cli.Result del = Cli.run("delete", "--index", idx.toString(), "--keys", keys.toString());
    assertThat(del.code()).as(del.describe()).isZero();
    Cli.Result r = Cli.run("report", "--index", idx.toString(), "--out", page.toString());
    assertThat(r.code()).as(r.describe()).isZero();
    String html = Files.readString(page);
    assertThat(html.substring(0, html.indexOf("<h2"))).contains("no live examples (2 deleted)");
  }

  /** Counts of one agree with their noun ("1 example", "1 bit", "1 listed group"), wherever the page prints a count. */
  @Test
  void countsOfOneAreSingular() throws Exception {
    Path one = tmp.resolve("one1"), same = tmp.resolve("same1");
    build(one, new boolean[][] {{true}}, null);
    build(same, new boolean[][] {{true}, {true}, {true}}, null);
    String onePage = report(one, "--dupes-radius", "1"), samePage = report(same, "--dupes-radius", "1");
    assertThat(onePage).contains("<p class=\"lede\">1 example, 1 bit per example.</p>");
    assertThat(section(samePage, "dupes")).contains("differ in at most 1 neuron,").contains("The 1 listed group (of 1) by size")
        .contains("The largest group (1 of 1 listed)");
    Cli.Result line = Cli.run("report", "--index", one.toString(), "--out", tmp.resolve("one-again.html").toString());
    assertThat(line.out()).as(line.describe()).contains(" about 1 example;");
    for (String page : List.of(onePage, samePage))
      assertThat(Pattern.compile("[ (>]1 (examples|bits|neurons|groups|rows|units|listed groups)\\b").matcher(page).find()).as(page).isFalse();
  }

  /** A chart of shares keeps its y axis within [0, 1], even when every value is the same (the purity of a single prefix). */
  @Test
  void aShareAxisStaysWithinZeroAndOne() throws Exception {
    Path idx = tmp.resolve("pure");
    build(idx, new boolean[][] {{true, false}, {true, false}, {false, true}, {false, true}}, "key,label\nk0,a\nk1,a\nk2,b\nk3,b\n");
    String html = report(idx);
    for (String id : List.of("purity", "neurons", "nearest-other")) {
      Matcher tick = Pattern.compile("text-anchor=\"end\">([^<]+)</text>").matcher(section(html, id));
      int ticks = 0;
      while (tick.find()) {
        ticks++;
        assertThat(Double.parseDouble(tick.group(1))).as(id + ": a y-axis tick").isBetween(0.0, 1.0);
      }
      assertThat(ticks).as(id).isPositive();
    }
  }

  /** An index that keeps no magnitudes says so in words, as {@code info} does, not as "0". */
  @Test
  void noKeptMagnitudesIsSaidInWords() throws Exception {
    Path idx = tmp.resolve("nomag");
    build(idx, new boolean[][] {{true, false}, {false, true}}, null);
    Cli.Result info = Cli.run("info", "--index", idx.toString());
    assertThat(info.out()).contains("magnitudes: none kept");
    assertThat(section(report(idx), "overview")).contains("<td class=\"l\">build.magnitudes.bits</td><td class=\"l\">none kept</td>");
  }

  /** A listed group with more members than shown says how many more there are. */
  @Test
  void aTruncatedGroupSaysHowManyMore() throws Exception {
    Path idx = tmp.resolve("nine");
    boolean[][] codes = new boolean[11][4];
    for (int i = 0; i < 9; i++) codes[i][0] = true; // k0..k8 share a code; k9 and k10 share another
    build(idx, codes, null);
    String html = section(report(idx, "--dupes-radius", "0"), "dupes");
    assertThat(html).contains("<td class=\"l\">row-0 row-1 row-2 row-3 row-4 row-5 … and 3 more</td>");
    assertThat(html).contains("<td class=\"l\">row-9 row-10</td>");
  }

  /** Each bar's tooltip names its bin: the unit ({@code layer:unit}) of a firing rate, the size range of a regions bucket. */
  @Test
  void barTooltipsNameTheirBin() throws Exception {
    Path idx = tmp.resolve("named");
    SplittableRandom rnd = new SplittableRandom(3);
    boolean[][] codes = new boolean[12][5];
    for (boolean[] r : codes) for (int j = 0; j < r.length; j++) r[j] = rnd.nextBoolean();
    Path file = Files2.bits(tmp.resolve("named.npy"), codes);
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--codes", file.toString(), "--code-layout", "a:3,b:2");
    assertThat(b.code()).as(b.describe()).isZero();
    String html = report(idx);
    List<String> units = new ArrayList<>();
    Matcher m = Pattern.compile("<title>([ab]:[0-9]+), firing rate: [0-9.]+</title>").matcher(section(html, "neurons"));
    while (m.find()) units.add(m.group(1));
    assertThat(units).containsExactly("a:0", "a:1", "a:2", "b:0", "b:1");
    Matcher regions = Pattern.compile("<title>([^<]*)</title></rect>").matcher(section(html, "regions"));
    int bars = 0;
    while (regions.find()) {
      bars++;
      assertThat(regions.group(1)).matches("regions of [0-9]+(-[0-9]+)? examples?, [ab+]+: [0-9]+");
    }
    assertThat(bars).isPositive();
    Matcher nearest = Pattern.compile("<title>([^<]*)</title></rect>").matcher(section(html, "nearest-other"));
    assertThat(nearest.find()).isTrue();
    assertThat(nearest.group(1)).matches("distance [0-9]+ bits?, .+: [0-9.]+");
  }

  private void build(Path idx, boolean[][] codes, String meta) {
    Path file = Files2.bits(tmp.resolve(idx.getFileName() + ".npy"), codes);
    List<String> args = new ArrayList<>(List.of("build", "--out", idx.toString(), "--codes", file.toString()));
    if (meta != null)
      args.addAll(List.of("--meta", Files2.write(tmp.resolve(idx.getFileName() + ".csv"), meta.getBytes(java.nio.charset.StandardCharsets.UTF_8)).toString()));
    Cli.Result b = Cli.run(args.toArray(String[]::new));
    assertThat(b.code()).as(b.describe()).isZero();
  }

  private String report(Path idx, String... more) throws Exception {
    Path page = tmp.resolve(idx.getFileName() + ".html");
    List<String> args = new ArrayList<>(List.of("report", "--index", idx.toString(), "--out", page.toString()));
    args.addAll(List.of(more));
    Cli.Result r = Cli.run(args.toArray(String[]::new));
    assertThat(r.code()).as(r.describe()).isZero();
    return Files.readString(page);
  }

  /** The part of the page from the heading with this id to the next heading. */
  static String section(String html, String id) {
    int start = html.indexOf("<h2 id=\"" + id + "\""), end = html.indexOf("<h2", start + 1);
    assertThat(start).as("section " + id).isNotNegative();
    return html.substring(start, end < 0 ? html.length() : end);
  }
}
