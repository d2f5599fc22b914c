package io.actindex.query.stats;

import io.actindex.core.CodeBlock;

/**
 * MMD^2_u (Gretton et al., JMLR 2012, eq. (3)) for the kernel {@code k(x, y) = 1 - d(x, y) / L}
 * on binary codes, over the whole pooled sample, with an exact permutation test and no pairwise
 * distances at all.
 *
 * <p>The kernel is the share of bits on which two codes agree, {@code k(x, y) = (1/L) sum_b [x_b
 * y_b + (1 - x_b)(1 - y_b)]}, so it has the explicit feature map {@code phi(x) = (x, 1 - x) /
 * sqrt(L)} and every kernel sum over a group is a sum over bits of products of per-bit counts:
 * with {@code c_b} the codes of A with bit b on ({@code m} codes) and {@code d_b} those of B
 * ({@code n} codes),
 *
 * <pre>
 * sum_{i != j in A} k = (1/L) sum_b [c_b^2 + (m - c_b)^2] - m
 * sum_{i in A, j in B} k = (1/L) sum_b [c_b d_b + (m - c_b)(n - d_b)]
 * </pre>
 *
 * The per-bit counts of a relabeling are {@code popcount(column_b & labels)} over bit columns of
 * the pooled sample, so a permutation costs {@code L * (m + n) / 64} popcounts. The same counts
 * give the statistic of any contiguous bit range (a layer).
 */
public final class AgreementMmd {
  private final int n, m, words, bits;
  private final long[] columns; // bit b: words [b * words, (b + 1) * words) over the pooled rows
  private final long[] totals; // per bit: pooled rows with the bit on

  /** {@code pooled}: the codes of A (rows {@code 0..m-1}) then those of B. */
  public AgreementMmd(CodeBlock pooled, int m) {
    this.n = pooled.size();
    this.m = m;
    this.bits = pooled.layout().bits();
    this.words = (n + 63) >>> 6;
    this.columns = new long[bits * words];
    this.totals = new long[bits];
    int w = pooled.wordsPerCode();
    long[] data = pooled.words();
    for (int i = 0; i < n; i++)
      for (int q = 0; q < w; q++)
        for (long x = data[i * w + q]; x != 0; x &= x - 1) {
          int b = (q << 6) + Long.numberOfTrailingZeros(x);
          columns[b * words + (i >>> 6)] |= 1L << (i & 63);
          totals[b]++;
        }
  }

  /** MMD^2_u on the bits {@code [from, to)} for A = the pooled rows whose label bit is set. */
  private double mmd2(long[] counts, int from, int to) {
    double len = to - from, na = m, nb = n - m;
    double sAA = 0, sBB = 0, sAB = 0;
    for (int b = from; b < to; b++) {
      double c = counts[b], d = totals[b] - counts[b];
      sAA += c * c + (na - c) * (na - c);
      sBB += d * d + (nb - d) * (nb - d);
      sAB += c * d + (na - c) * (nb - d);
    }
    sAA = sAA / len - na;
    sBB = sBB / len - nb;
    sAB /= len;
    return sAA / (na * (na - 1)) + sBB / (nb * (nb - 1)) - 2 * sAB / (na * nb);
  }

  private void counts(long[] labels, long[] out) {
    for (int b = 0; b < bits; b++) {
      long c = 0;
      int base = b * words;
      for (int q = 0; q < words; q++) c += Long.bitCount(columns[base + q] & labels[q]);
      out[b] = c;
    }
  }

  /**
   * One test per bit range {@code ranges[r] = {from, to}} (e.g. the whole code and each layer),
   * all on the same relabelings.
   */
  public PermutationTest[] test(int[][] ranges, Permutations perms, int permutations, int threads) {
    long[] labels = new long[words];
    for (int i = 0; i < m; i++) labels[i >>> 6] |= 1L << (i & 63);
    long[] counts = new long[bits];
    counts(labels, counts);
    double[] observed = new double[ranges.length];
    for (int r = 0; r < ranges.length; r++) observed[r] = mmd2(counts, ranges[r][0], ranges[r][1]);
    double[][] nulls = new double[ranges.length][permutations];
    Parallel.forRange(threads, permutations, (from, to) -> {
      int[] order = new int[n];
      long[] lab = new long[words], cnt = new long[bits];
      for (int p = from; p < to; p++) {
        perms.fill(p, order);
        java.util.Arrays.fill(lab, 0);
        for (int i = 0; i < m; i++) lab[order[i] >>> 6] |= 1L << (order[i] & 63);
        counts(lab, cnt);
        for (int r = 0; r < ranges.length; r++) nulls[r][p] = mmd2(cnt, ranges[r][0], ranges[r][1]);
      }
    });
    PermutationTest[] out = new PermutationTest[ranges.length];
    for (int r = 0; r < ranges.length; r++) out[r] = PermutationTest.of(observed[r], nulls[r]);
    return out;
  }
}
