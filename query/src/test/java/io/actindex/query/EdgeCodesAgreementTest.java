package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.edge.BundleFormat;
import io.actindex.edge.EdgeBundle;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.edge.EdgeMain;
import io.actindex.index.store.IndexReader;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The three ways a device scores a code agree row by row with {@code ood score --codes}: the edge
 * jar's codes mode ({@link EdgeMain} as its own process, rows of 0/1 characters, plain, with commas
 * or with spaces), and the generated C source compiled by gcc ({@link CEdge}). Codes are skewed
 * (most bits rarely on, some often) over three layers whose boundaries lie inside 64-bit words,
 * with duplicated training codes, every 11th example deleted, a layer subset or all layers, both
 * statistics and k from 1 to 8. The queries hold live training codes (distance 0), one-bit flips of
 * them, fresh skewed codes, uniform codes, complements and the all-zero and all-one codes; the test
 * checks that distance 0, ties at the k-th distance and both decisions occur. A bad row (short,
 * long, a 2, NaN, empty) stops the jar with exit 2 naming its line and row, after the rows before
 * it were printed as without it. Scores compare as doubles: the jar prints {@code Double.toString},
 * C prints {@code %a}, both exact.
 */
class EdgeCodesAgreementTest {
  @TempDir Path tmp;

  private static final String[] LAYOUTS = {"a:37,b:50,c:29", "a:5,b:70,c:61", "a:63,b:2,c:64", "a:100,b:30,c:11"};

  @Test
  void jarAndCAgreeWithOodScoreOnCodes() throws Exception {
    int rows = 0, zero = 0, ties = 0, outs = 0;
    for (int rep = 0; rep < LAYOUTS.length; rep++) {
      long seed = Randoms.seed(rep);
      String what = Randoms.describe(seed) + " layout " + LAYOUTS[rep];
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeLayout layout = CodeLayout.parse(LAYOUTS[rep]);
      int bits = layout.bits();
      double[] p = new double[bits];
      for (int b = 0; b < bits; b++) p[b] = Math.pow(rnd.nextDouble(), 3); // skewed: most bits rarely on
      boolean[][] train = skewed(rnd, p, 1400);
      for (int i = 1200; i < 1400; i++) train[i] = train[rnd.nextInt(1200)].clone(); // exact duplicates
      CodeBlock trainCodes = CodeBlock.fromBits(layout, train);
      List<boolean[]> q = new ArrayList<>();
      for (int i = 0; i < 40; i++) q.add(train[liveId(rnd, train.length)].clone()); // distance 0
      for (int i = 0; i < 40; i++) {
        boolean[] c = train[liveId(rnd, train.length)].clone();
        c[rnd.nextInt(bits)] ^= true;
        q.add(c);
      }
      q.addAll(List.of(skewed(rnd, p, 40)));
      double[] half = new double[bits];
      java.util.Arrays.fill(half, 0.5);
      q.addAll(List.of(skewed(rnd, half, 40)));
      for (int i = 0; i < 20; i++) {
        boolean[] c = train[rnd.nextInt(train.length)].clone();
        for (int b = 0; b < bits; b++) c[b] = !c[b];
        q.add(c);
      }
      q.add(new boolean[bits]);
      boolean[] ones = new boolean[bits];
      java.util.Arrays.fill(ones, true);
      q.add(ones);
      CodeBlock queries = CodeBlock.fromBits(layout, q.toArray(new boolean[0][]));

      Path dir = OodIndexTest.index(tmp.resolve("idx" + rep), trainCodes);
      List<String> layers = List.of(List.of("a", "c"), List.of("b"), List.<String>of(), List.of("c")).get(rep);
      int k = List.of(5, 3, 1, 8).get(rep);
      Statistic st = rep % 2 == 0 ? Statistic.MEAN : Statistic.KTH;
      OodCalibrate.run(dir, Source.codes(OodIndexTest.npy(tmp.resolve("cal" + rep + ".npy"), CodeBlock.fromBits(layout, skewed(rnd, p, 150)))),
          RowRange.ALL, new OodCalibrate.Params(k, st, 0.9, layers, false), Progress.NONE);
      Path bundle = tmp.resolve("b" + rep + ".edge"), c = tmp.resolve("c" + rep);
      OodScore.Output o;
      try (IndexReader r = IndexReader.open(dir)) {
        EdgeExport.run(r, new EdgeExport.Params(bundle, false, c));
        o = OodScore.run(r, Source.codes(OodIndexTest.npy(tmp.resolve("q" + rep + ".npy"), queries)), RowRange.ALL, new OodScore.Params(0),
            Progress.NONE);
      }
      EdgeBundle b = BundleFormat.read(bundle);
      long[] mask = layers.isEmpty() ? null : b.mask(layers);

      List<String> text = new ArrayList<>(), cLines = new ArrayList<>();
      for (int i = 0; i < queries.size(); i++) {
        text.add(bitsLine(q.get(i), List.of("", ",", " ").get(i % 3)));
        cLines.add(CEdge.codeLine(queries.code(i)));
      }
      Jar jar = jar(bundle, text);
      assertThat(jar.exit).as(what + ": " + jar.err).isZero();
      List<String> jarRows = jar.rows();
      List<String> cOut = CEdge.run(CEdge.compile(c), cLines);
      assertThat(jarRows).as(what).hasSize(queries.size());
      assertThat(cOut).as(what).hasSize(queries.size());
      for (int i = 0; i < queries.size(); i++) {
        OodScore.Result res = o.results().get(i);
        String row = what + " row " + i;
        String[] f = jarRows.get(i).split(",");
        assertThat(f[0]).as(row).isEqualTo(String.valueOf(i));
        assertThat(Double.parseDouble(f[1])).as(row + " jar score").isEqualTo(res.score());
        assertThat(f[2]).as(row + " jar decision").isEqualTo(res.out() ? "out" : "in");
        assertThat(Double.parseDouble(f[3])).as(row + " jar p-value").isEqualTo(res.pValue());
        String[] g = cOut.get(i).split(" ");
        assertThat(Integer.parseInt(g[0])).as(row + " C k-th distance").isEqualTo(res.kth());
        assertThat(Double.parseDouble(g[1])).as(row + " C score").isEqualTo(res.score());
        assertThat(g[2]).as(row + " C decision").isEqualTo(res.out() ? "1" : "0");
        assertThat(Double.parseDouble(g[3])).as(row + " C p-value").isEqualTo(res.pValue());
        if (res.ownRegion()) zero++;
        if (within(b, queries.code(i), mask, res.kth()) > k) ties++;
        if (res.out()) outs++;
        rows++;
      }

      if (rep == 0) badRows(bundle, text, jarRows, what);
    }
    // the cases the test is about all occur
    assertThat(zero).as("rows at distance 0 from a training code").isPositive();
    assertThat(ties).as("rows with ties at the k-th distance").isPositive();
    assertThat(outs).as("both decisions").isBetween(1, rows - 1);
  }

  /** A bad row in the middle: exit 2, one line naming its line and row, the rows before it printed as without it. */
  private void badRows(Path bundle, List<String> text, List<String> good, String what) throws Exception {
    String g = text.get(3).replace(",", "").replace(" ", "");
    String[][] cases = {{g.substring(1), "bits, the bundle's codes have"}, {g + "0", "more than the bundle's"},
        {"2" + g.substring(1), "'2' is not 0 or 1"}, {"NaN", "'N' is not 0 or 1"}, {"", "0 bits, the bundle's codes have"}};
    for (String[] bad : cases) {
      List<String> lines = new ArrayList<>(text.subList(0, 7));
      lines.add(bad[0]);
      lines.addAll(text.subList(7, 10));
      Jar jar = jar(bundle, lines);
      assertThat(jar.exit).as(what + " bad row " + bad[0]).isEqualTo(2);
      assertThat(jar.err.strip()).as(what).startsWith("stdin line 8 (row 7): ").contains(bad[1]).doesNotContain("\n");
      assertThat(jar.rows()).as(what).isEqualTo(good.subList(0, 7));
    }
  }

  /** How many training examples lie within {@code d} of {@code code} on the masked bits. */
  private static long within(EdgeBundle b, long[] code, long[] mask, int d) {
    long n = 0;
    for (int i = 0; i < b.uniqueCodes(); i++) {
      long[] t = b.code(i);
      int dist = 0;
      for (int w = 0; w < t.length; w++) dist += Long.bitCount((t[w] ^ code[w]) & (mask == null ? -1L : mask[w]));
      if (dist <= d) n += b.count(i);
    }
    return n;
  }

  /** An id that {@link OodIndexTest#index} keeps live (it deletes every 11th). */
  private static int liveId(SplittableRandom rnd, int n) {
    int i;
    do i = rnd.nextInt(n);
    while (i % 11 == 0);
    return i;
  }

  private static boolean[][] skewed(SplittableRandom rnd, double[] p, int n) {
    boolean[][] rows = new boolean[n][p.length];
    for (boolean[] r : rows) for (int b = 0; b < p.length; b++) r[b] = rnd.nextDouble() < p[b];
    return rows;
  }

  private static String bitsLine(boolean[] code, String sep) {
    StringBuilder s = new StringBuilder();
    for (int b = 0; b < code.length; b++) s.append(b == 0 ? "" : sep).append(code[b] ? '1' : '0');
    return s.toString();
  }

  private record Jar(int exit, String out, String err) {
    /** The score rows, after the caution and the header line. */
    List<String> rows() {
      List<String> l = out.lines().toList();
      assertThat(l.get(0)).startsWith("# a calibrated heuristic");
      assertThat(l.get(1)).isEqualTo("row,score,decision,p_value");
      return l.subList(2, l.size());
    }
  }

  /** The edge jar's main class in its own JVM, on its own classes only (it depends on nothing), rows on stdin. */
  private Jar jar(Path bundle, List<String> lines) throws Exception {
    Path in = Files.createTempFile(tmp, "rows", ".txt"), out = Files.createTempFile(tmp, "out", ".txt"), err = Files.createTempFile(tmp, "err", ".txt");
    Files.write(in, lines);
    String java = ProcessHandle.current().info().command().orElse("java");
    String cp = Path.of(EdgeMain.class.getProtectionDomain().getCodeSource().getLocation().toURI()).toString();
    Process p = new ProcessBuilder(java, "-cp", cp, EdgeMain.class.getName(), bundle.toString()).redirectInput(in.toFile())
        .redirectOutput(out.toFile()).redirectError(err.toFile()).start();
    if (!p.waitFor(300, TimeUnit.SECONDS)) {
      p.destroyForcibly();
      throw new AssertionError("the edge jar did not finish");
    }
    return new Jar(p.exitValue(), Files.readString(out, StandardCharsets.UTF_8), Files.readString(err, StandardCharsets.UTF_8));
  }
}
