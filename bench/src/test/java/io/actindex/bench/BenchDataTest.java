package io.actindex.bench;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.CodeBlock;
import io.actindex.core.Hamming;
import io.actindex.core.SyntheticCodes;
import org.junit.jupiter.api.Test;

class BenchDataTest extends TempBenchCache {
  @Test
  void reluCodesAreTheSignsOfTheCachedActivations() {
    int n = 70_000, bits = 64; // more than one generation chunk
    CodeBlock codes = BenchData.codes("relu", n, bits);
    float[] acts = BenchData.activations(n, bits);
    for (int i = 0; i < n; i += 7)
      for (int b = 0; b < bits; b++) assertThat(codes.bit(i, b)).as("row " + i + " bit " + b).isEqualTo(acts[i * bits + b] > 0);
    // a second load reads the cache and gives the same data
    assertThat(BenchData.codes("relu", n, bits).words()).isEqualTo(codes.words());
    assertThat(BenchData.activations(n, bits)).isEqualTo(acts);
    assertThat(dir.resolve("relu-codes-n" + n + "-b" + bits + ".bin")).exists();
  }

  @Test
  void uniformCodesComeFromTheSeededGenerator() {
    assertThat(BenchData.codes("uniform", 500, 100).words()).isEqualTo(SyntheticCodes.uniform(500, 100, BenchData.SEED).words());
  }

  @Test
  void nearDuplicateQueriesLieWithinFourBitsOfAStoredCode() {
    CodeBlock stored = BenchData.codes("uniform", 2000, 256);
    CodeBlock q = BenchData.queries("uniform", "in", 2000, 256).codes();
    assertThat(q.size()).isEqualTo(BenchData.QUERIES);
    int exact = 0;
    for (int i = 0; i < q.size(); i++) {
      int best = Integer.MAX_VALUE;
      for (int j = 0; j < stored.size(); j++) best = Math.min(best, Hamming.distance(q.words(), i * 4, stored.words(), j * 4, 4));
      assertThat(best).isLessThanOrEqualTo(4);
      if (best == 0) exact++;
    }
    assertThat(exact).isBetween(1, q.size() - 1); // some have no flip, most have flips
  }

  @Test
  void oodQueriesLieFartherThanInDistributionOnes() {
    int n = 5000, bits = 128;
    CodeBlock stored = BenchData.codes("relu", n, bits);
    io.actindex.core.ScanSearcher scan = new io.actindex.core.ScanSearcher(stored);
    double[] mean = new double[2];
    String[] kinds = {"in", "ood"};
    for (int k = 0; k < 2; k++) {
      long[][] q = BenchData.queries("relu", kinds[k], n, bits).codeArrays();
      for (int i = 0; i < 200; i++) mean[k] += scan.knn(q[i], 1).dist(0) / 200.0;
    }
    assertThat(mean[1]).as("mean distance to the nearest code, ood vs in").isGreaterThan(1.5 * mean[0]);
  }
}
