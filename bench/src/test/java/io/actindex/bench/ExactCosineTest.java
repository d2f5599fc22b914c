package io.actindex.bench;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.Randoms;
import java.util.Arrays;
import java.util.Comparator;
import java.util.SplittableRandom;
import java.util.stream.IntStream;
import org.apache.lucene.util.VectorUtil;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

class ExactCosineTest {

  /** Random activations: ReLU-like (about half zeros), a zero row now and then. */
  private static float[] rows(SplittableRandom rnd, int n, int d) {
    float[] a = new float[n * d];
    for (int i = 0; i < n; i++) {
      if (rnd.nextInt(20) == 0) continue;
      for (int j = 0; j < d; j++) a[i * d + j] = (float) Math.max(0, rnd.nextGaussian());
    }
    return a;
  }

  /**
   * The reference: cosine from Lucene's VectorUtil.cosine (an outside library) on the raw rows,
   * 0 for a zero row, all rows sorted by (score desc, index asc).
   */
  private static Integer[] naiveOrder(float[] raw, int d, float[] q) {
    int n = raw.length / d;
    double[] s = new double[n];
    boolean qZero = IntStream.range(0, d).allMatch(j -> q[j] == 0);
    for (int i = 0; i < n; i++) {
      float[] row = Arrays.copyOfRange(raw, i * d, (i + 1) * d);
      boolean zero = IntStream.range(0, d).allMatch(j -> row[j] == 0);
      s[i] = zero || qZero ? 0 : VectorUtil.cosine(row, q);
    }
    Integer[] order = IntStream.range(0, n).boxed().toArray(Integer[]::new);
    Arrays.sort(order, Comparator.<Integer>comparingDouble(i -> -s[i]).thenComparingInt(i -> i));
    return order;
  }

  private static double cos(float[] raw, int d, int row, float[] q) {
    float[] r = Arrays.copyOfRange(raw, row * d, (row + 1) * d);
    return IntStream.range(0, d).allMatch(j -> r[j] == 0) ? 0 : VectorUtil.cosine(r, q);
  }

  @ParameterizedTest
  @ValueSource(ints = {1, 3, 10, 50})
  void loopsAndEjmlMatchTheReferenceRanking(int k) {
    for (int rep = 0; rep < 20; rep++) {
      long seed = Randoms.seed(rep * 100 + k);
      SplittableRandom rnd = new SplittableRandom(seed);
      int d = 1 + rnd.nextInt(40), n = 1 + rnd.nextInt(300);
      float[] raw = rows(rnd, n, d);
      float[] unit = raw.clone();
      ExactCosine.normalizeRows(unit, d);
      float[] q = Arrays.copyOfRange(rows(rnd, 1, d), 0, d);
      if (IntStream.range(0, d).allMatch(j -> q[j] == 0)) q[0] = 1;
      Integer[] want = naiveOrder(raw, d, q);
      int[] loops = ExactCosine.knnLoops(unit, d, q, k, new float[n]);
      int[] ejml = new ExactCosine.Ejml(unit, d).knn(q, k);
      assertThat(loops).as(Randoms.describe(seed)).hasSize(Math.min(k, n));
      assertThat(ejml).as(Randoms.describe(seed)).hasSize(Math.min(k, n));
      for (int i = 0; i < loops.length; i++) {
        // Rank i must hold a row whose reference cosine equals the reference i-th best (float rounding
        // may swap rows whose cosines differ by less than 1e-5).
        double expect = cos(raw, d, want[i], q);
        assertThat(cos(raw, d, loops[i], q)).as("loops rank " + i + " " + Randoms.describe(seed)).isCloseTo(expect, org.assertj.core.data.Offset.offset(1e-5));
        assertThat(cos(raw, d, ejml[i], q)).as("ejml rank " + i + " " + Randoms.describe(seed)).isCloseTo(expect, org.assertj.core.data.Offset.offset(1e-5));
      }
      assertThat(Arrays.stream(loops).distinct().count()).isEqualTo(loops.length);
    }
  }

  @Test
  void tiesGoToTheLowerRow() {
    int d = 3;
    float[] rows = {1, 0, 0, 0, 1, 0, 2, 0, 0, 3, 0, 0, 0, 0, 0};
    ExactCosine.normalizeRows(rows, d);
    // rows 0, 2, 3 point the same way as the query (cosine 1); row 1 is orthogonal; row 4 is zero
    assertThat(ExactCosine.knnLoops(rows, d, new float[] {5, 0, 0}, 4, new float[5])).containsExactly(0, 2, 3, 1);
    assertThat(new ExactCosine.Ejml(rows, d).knn(new float[] {5, 0, 0}, 4)).containsExactly(0, 2, 3, 1);
  }

  @Test
  void workedExample() {
    // cos((1,2,3),(4,5,6)) = 32 / (sqrt(14) sqrt(77)) = 0.974632 (arithmetic by hand: common practice)
    float[] rows = {1, 2, 3, 4, 5, 6};
    ExactCosine.normalizeRows(rows, 3);
    float[] q = ExactCosine.unit(new float[] {4, 5, 6});
    double dot = rows[0] * q[0] + rows[1] * q[1] + rows[2] * q[2];
    assertThat(dot).isCloseTo(32 / (Math.sqrt(14) * Math.sqrt(77)), org.assertj.core.data.Offset.offset(1e-6));
    assertThat(ExactCosine.knnLoops(rows, 3, new float[] {4, 5, 6}, 2, new float[2])).containsExactly(1, 0);
  }

  @Test
  void topKOfFewerScoresThanK() {
    assertThat(ExactCosine.topK(new float[] {0.5f, 0.9f}, 2, 5)).containsExactly(1, 0);
    assertThat(ExactCosine.topK(new float[0], 0, 3)).isEmpty();
  }
}
