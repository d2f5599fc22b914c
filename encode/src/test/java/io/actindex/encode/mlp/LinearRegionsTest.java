package io.actindex.encode.mlp;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.encode.CodeStream;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.encode.io.ArrayMatrixReader;
import io.actindex.encode.io.MatrixReader;
import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import java.io.IOException;
import java.util.HashSet;
import java.util.List;
import java.util.Set;
import java.util.SplittableRandom;
import org.ejml.data.DMatrixRMaj;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;
import org.junit.jupiter.api.RepeatedTest;

/**
 * Linear regions of one hidden ReLU layer on 2-D inputs: unit i is on where w_i . x + b_i > 0, so
 * the codes name the cells of the arrangement of n lines. With the lines in general position (no
 * two parallel, no three through one point) the arrangement has 1 + n + n(n-1)/2 regions
 * (Zaslavsky 1975, "Facing up to arrangements: face-count formulas for partitions of space by
 * hyperplanes", Memoirs of the AMS 154; for lines, the classical count of regions cut by n lines
 * in general position). Each region has a distinct on/off code, so the encoder must produce
 * exactly that many distinct codes on inputs that visit every region.
 */
class LinearRegionsTest {

  /** n random lines in general position, as a one-hidden-layer MLP (output layer unused). */
  static Mlp randomUnits(int n, SplittableRandom rnd) {
    while (true) {
      double[] w = new double[2 * n], b = new double[n];
      for (int i = 0; i < n; i++) {
        double angle = rnd.nextDouble(Math.PI * 2), scale = rnd.nextDouble(0.5, 2);
        w[2 * i] = Math.cos(angle) * scale;
        w[2 * i + 1] = Math.sin(angle) * scale;
        b[i] = rnd.nextDouble(-1, 1);
      }
      if (minVertexLineDistance(w, b, n) > 1e-3) {
        Mlp.Layer hidden = new Mlp.Layer("h", DMatrixRMaj.wrap(n, 2, w), b);
        Mlp.Layer out = new Mlp.Layer("out", new DMatrixRMaj(1, n), new double[1]);
        return new Mlp(List.of(hidden, out));
      }
    }
  }

  /** Intersection of lines i and j, or null if (nearly) parallel. */
  static double[] vertex(double[] w, double[] b, int i, int j) {
    double det = w[2 * i] * w[2 * j + 1] - w[2 * i + 1] * w[2 * j];
    if (Math.abs(det) < 1e-9) return null;
    return new double[] {(-b[i] * w[2 * j + 1] + b[j] * w[2 * i + 1]) / det, (-w[2 * i] * b[j] + w[2 * j] * b[i]) / det};
  }

  /** Smallest distance from any vertex to a line not through it (0 if two lines are parallel): general position iff > 0. */
  static double minVertexLineDistance(double[] w, double[] b, int n) {
    double min = Double.MAX_VALUE;
    for (int i = 0; i < n; i++)
      for (int j = i + 1; j < n; j++) {
        double[] p = vertex(w, b, i, j);
        if (p == null) return 0;
        for (int k = 0; k < n; k++) {
          if (k == i || k == j) continue;
          double norm = Math.hypot(w[2 * k], w[2 * k + 1]);
          min = Math.min(min, Math.abs(w[2 * k] * p[0] + w[2 * k + 1] * p[1] + b[k]) / norm);
        }
      }
    return min;
  }

  static Set<Long> distinctCodes(Mlp mlp, MatrixReader.Factory points) throws IOException {
    Set<Long> codes = new HashSet<>();
    try (CodeStream s = Encoders.model(mlp, "units", points, EncodeOptions.positive())) {
      CodeBlock b;
      while ((b = s.next(65536)) != null) for (int i = 0; i < b.size(); i++) codes.add(b.code(i)[0]);
    }
    return codes;
  }

  static long regions(int n) {
    return 1 + n + (long) n * (n - 1) / 2;
  }

  @org.junit.jupiter.api.Tag("slow")
  @ParameterizedTest
  @ValueSource(ints = {1, 2, 3, 5, 8})
  void fineGridOverAllIntersectionPointsFindsEveryRegion(int n) throws IOException {
    Mlp mlp = randomUnits(n, new SplittableRandom(1975 + n));
    double[] w = mlp.layers().getFirst().weight().data, b = mlp.layers().getFirst().bias();
    double lo = -1, hi = 1;
    for (int i = 0; i < n; i++)
      for (int j = i + 1; j < n; j++) {
        double[] p = vertex(w, b, i, j);
        lo = Math.min(lo, Math.min(p[0], p[1]));
        hi = Math.max(hi, Math.max(p[0], p[1]));
      }
    double margin = (hi - lo) * 0.1 + 1, from = lo - margin, to = hi + margin;
    int side = 1500;
    double[] grid = new double[side * side * 2];
    for (int i = 0; i < side; i++)
      for (int j = 0; j < side; j++) {
        grid[2 * (i * side + j)] = from + (to - from) * i / (side - 1);
        grid[2 * (i * side + j) + 1] = from + (to - from) * j / (side - 1);
      }
    Set<Long> codes = distinctCodes(mlp, () -> new ArrayMatrixReader("grid", grid, 2));
    assertThat((long) codes.size()).as("regions of %d lines in general position", n).isEqualTo(regions(n));
  }

  @RepeatedTest(10)
  void pointsAroundEveryVertexFindEveryRegion(org.junit.jupiter.api.RepetitionInfo rep) throws IOException {
    // Every region of an arrangement of n >= 2 non-parallel lines has a vertex on its boundary; the
    // four bisector directions at a vertex point into its four incident regions.
    long seed = Randoms.seed(rep.getCurrentRepetition());
    SplittableRandom rnd = new SplittableRandom(seed);
    int n = 2 + rnd.nextInt(30);
    Mlp mlp = randomUnits(n, rnd);
    double[] w = mlp.layers().getFirst().weight().data, b = mlp.layers().getFirst().bias();
    double eps = minVertexLineDistance(w, b, n) / 4;
    double[] pts = new double[n * (n - 1) / 2 * 8];
    int k = 0;
    for (int i = 0; i < n; i++)
      for (int j = i + 1; j < n; j++) {
        double[] p = vertex(w, b, i, j);
        // unit directions along lines i and j
        double ni = Math.hypot(w[2 * i], w[2 * i + 1]), nj = Math.hypot(w[2 * j], w[2 * j + 1]);
        double[] ui = {-w[2 * i + 1] / ni, w[2 * i] / ni}, uj = {-w[2 * j + 1] / nj, w[2 * j] / nj};
        for (int si = -1; si <= 1; si += 2)
          for (int sj = -1; sj <= 1; sj += 2) {
            double dx = si * ui[0] + sj * uj[0], dy = si * ui[1] + sj * uj[1], len = Math.hypot(dx, dy);
            pts[k++] = p[0] + eps * dx / len;
            pts[k++] = p[1] + eps * dy / len;
          }
      }
    Set<Long> codes = distinctCodes(mlp, () -> new ArrayMatrixReader("vertices", pts, 2));
    assertThat((long) codes.size()).as(Randoms.describe(seed) + " n=" + n).isEqualTo(regions(n));
  }
}
