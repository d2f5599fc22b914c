package io.actindex.bench;

import static org.assertj.core.api.Assertions.assertThat;

import java.nio.file.Path;
import java.util.Arrays;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class LuceneHnswTest {
  @TempDir Path dir;

  @org.junit.jupiter.api.BeforeAll
  static void blankSeedIsNoSeed() {
    // Lucene's StringHelper parses -Dtests.seed as hex when the property exists; the build passes
    // an empty one when no seed is given, which Lucene cannot parse.
    String s = System.getProperty("tests.seed");
    if (s != null && s.isBlank()) System.clearProperty("tests.seed");
  }

  @Test
  void documentNumbersAreRowsAndSmallGraphsAreNearlyExact() throws Exception {
    int n = 3000, d = 16;
    SplittableRandom rnd = new SplittableRandom(7);
    float[] rows = new float[n * d];
    for (int i = 0; i < rows.length; i++) rows[i] = (float) rnd.nextGaussian();
    Arrays.fill(rows, 5 * d, 6 * d, 0f); // a zero row is accepted
    try (LuceneHnsw h = LuceneHnsw.build(dir, rows, d)) {
      assertThat(h.size()).isEqualTo(n);
      assertThat(h.segments()).isEqualTo(1);
      assertThat(h.bytesOnDisk()).isGreaterThan(4L * n * d);
      float[] unit = rows.clone();
      ExactCosine.normalizeRows(unit, d);
      int[][] truth = new int[50][], found = new int[50][];
      for (int q = 0; q < 50; q++) {
        int row = 100 + q * 37;
        float[] v = Arrays.copyOfRange(rows, row * d, (row + 1) * d);
        found[q] = h.knn(v, 10);
        truth[q] = ExactCosine.knnLoops(unit, d, v, 10, new float[n]);
        assertThat(found[q][0]).as("a stored row finds itself first").isEqualTo(row);
      }
      // 3,000 points, default graph parameters: HNSW should miss almost nothing (from memory of ANN benchmarks)
      assertThat(Recall.atK(truth, found, 10)).isGreaterThan(0.9);
    }
  }
}
