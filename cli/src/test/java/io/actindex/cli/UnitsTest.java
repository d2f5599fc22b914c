package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** Percentages in tables: a share short of 1 (or above 0) never reads as 100% (or 0%). */
class UnitsTest {
  @TempDir Path tmp;

  @Test
  void percentKeepsWholeNumbersAndNeverRoundsToTheEnds() {
    assertThat(Units.percent(1)).isEqualTo("100%");
    assertThat(Units.percent(0)).isEqualTo("0%");
    assertThat(Units.percent(0.8)).isEqualTo("80%");
    assertThat(Units.percent(0.5)).isEqualTo("50%");
    assertThat(Units.percent(0.994)).isEqualTo("99%");
    assertThat(Units.percent(299.0 / 300)).isEqualTo("99.7%");
    assertThat(Units.percent(0.9996)).isEqualTo("99.96%");
    assertThat(Units.percent(0.004)).isEqualTo("0.4%");
    assertThat(Units.percent(1e-9)).isEqualTo("0.0000%"); // at most 4 decimals
    for (int n = 1; n <= 5000; n++)
      for (int k : new int[] {1, n - 1}) {
        if (k <= 0 || k >= n) continue;
        String s = Units.percent((double) k / n);
        assertThat(s).as(k + " of " + n).isNotIn("100%", "0%");
      }
  }

  /**
   * One region of two examples with two labels among 298 labelled singletons: census reads 99.7%, not
   * 100%; 99% of the labelled examples are alone, and the purity where shared is 50%.
   */
  @Test
  void censusTableShowsAPurityShortOfOne() {
    int n = 300;
    boolean[][] codes = new boolean[n][12];
    List<String> meta = new ArrayList<>(List.of("key,label"));
    for (int i = 0; i < n; i++) {
      int c = i == n - 1 ? 0 : i; // the last row shares row 0's code
      for (int b = 0; b < 12; b++) codes[i][b] = ((c >> b) & 1) == 1;
      meta.add("k" + i + "," + (i == n - 1 ? "b" : "a"));
    }
    Path idx = tmp.resolve("idx");
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), codes).toString(),
        "--meta", Files2.text(tmp.resolve("m.csv"), meta).toString());
    assertThat(b.code()).as(b.describe()).isZero();
    Cli.Result c = Cli.run("census", "--index", idx.toString(), "--largest", "1");
    assertThat(c.code()).as(c.describe()).isZero();
    String row = c.out().lines().filter(l -> l.trim().startsWith("code ")).findFirst().orElseThrow();
    String[] cells = row.trim().split("\\s+"); // layers, bits, regions, singletons, median, p90, largest, mean, purity, alone, where shared
    assertThat(cells[8]).as(c.describe()).isEqualTo("99.7%"); // 299 of 300 carry their region's majority label
    assertThat(cells[9]).as(c.describe()).isEqualTo("99%"); // 298 of 300 alone in their region (99.3%)
    assertThat(cells[10]).as(c.describe()).isEqualTo("50%"); // the one shared region: a and b, 1 of 2 with the majority
  }
}
