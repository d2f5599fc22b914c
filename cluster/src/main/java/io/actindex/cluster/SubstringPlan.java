package io.actindex.cluster;

import io.actindex.core.Hamming;
import java.io.Serializable;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * How codes are cut for the join: every bit of the code goes to exactly one of {@code m} substrings
 * (tables), and two codes within {@code radius} agree within {@code rho = floor(radius / m)} on at
 * least one substring (the pigeonhole property of multi-index hashing: Norouzi, Punjani & Fleet,
 * "Fast search in Hamming space with multi-index hashing", CVPR 2012, Prop. 1). The property holds
 * for any split of the bits; {@link #balanced} picks one whose substrings carry similar entropy on a
 * sample, so skewed (ReLU-like) codes with dead and always-on units do not pile into a few buckets.
 *
 * <p>A substring key is the substring's bits, in table order, packed little-endian into {@code
 * ceil(width / 64)} words. Immutable; shipped to every task.
 */
public final class SubstringPlan implements Serializable {
  private static final long serialVersionUID = 1L;

  private final int bits, radius, rho;
  private final int[][] tableBits; // table -> code bit positions, ascending
  private final long[][] masks; // table -> mask over the code's words

  SubstringPlan(int bits, int radius, int[][] tableBits) {
    this.bits = bits;
    this.radius = radius;
    this.tableBits = tableBits;
    this.rho = radius / tableBits.length;
    int words = (bits + 63) >>> 6;
    masks = new long[tableBits.length][words];
    boolean[] seen = new boolean[bits];
    for (int t = 0; t < tableBits.length; t++) {
      if (tableBits[t].length == 0) throw new IllegalArgumentException("table " + t + " has no bits");
      for (int b : tableBits[t]) {
        if (b < 0 || b >= bits || seen[b]) throw new IllegalArgumentException("bit " + b + " is out of range or in two tables");
        seen[b] = true;
        masks[t][b >>> 6] |= 1L << (b & 63);
      }
    }
    for (int b = 0; b < bits; b++) if (!seen[b]) throw new IllegalArgumentException("bit " + b + " is in no table");
  }

  /**
   * The number of tables when the caller does not force one: the smallest expected work per code,
   * {@code m * probes(w, rho) * (1 + n / 2^w)} with {@code w = bits / m} (uniform codes; probes of a
   * table = keys within {@code rho} flips), over {@code m = 1 .. min(bits, radius + 1)}. More than
   * {@code radius + 1} tables never helps: {@code rho} is already 0 there.
   */
  public static int chooseTables(int bits, int radius, long n) {
    int best = 1;
    double bestCost = Double.POSITIVE_INFINITY;
    for (int m = 1; m <= Math.min(bits, radius + 1); m++) {
      int w = bits / m, r = radius / m;
      double probes = 0;
      for (int i = 0; i <= Math.min(r, w); i++) probes += binomial(w, i);
      double cost = m * probes * (1 + n / Math.pow(2, w));
      if (cost < bestCost) {
        bestCost = cost;
        best = m;
      }
    }
    return best;
  }

  static double binomial(int n, int k) {
    double c = 1;
    for (int i = 0; i < k; i++) c = c * (n - i) / (i + 1);
    return c;
  }

  /**
   * {@code m} tables over {@code bits} bits, balanced on {@code sample} (codes as {@code words}-word
   * rows, may be empty): bits sorted by their firing entropy (highest first, ties by position) are
   * dealt to the tables in snake order (0..m-1, m-1..0, ...), so each table gets a near-equal share
   * of informative bits, and neighbouring bits of similar rate (often copies of each other) land in
   * different tables.
   */
  public static SubstringPlan balanced(int bits, int radius, int m, long[] sample, int sampleRows) {
    if (m < 1 || m > bits) throw new IllegalArgumentException("tables must be 1.." + bits + ", got " + m);
    int words = (bits + 63) >>> 6;
    long[] ones = new long[bits];
    for (int i = 0; i < sampleRows; i++)
      for (int b = 0; b < bits; b++) if ((sample[i * words + (b >>> 6)] >>> (b & 63) & 1) != 0) ones[b]++;
    double[] entropy = new double[bits];
    for (int b = 0; b < bits; b++) {
      double p = sampleRows == 0 ? 0.5 : (double) ones[b] / sampleRows;
      entropy[b] = p <= 0 || p >= 1 ? 0 : -(p * Math.log(p) + (1 - p) * Math.log(1 - p));
    }
    Integer[] order = new Integer[bits];
    for (int b = 0; b < bits; b++) order[b] = b;
    Arrays.sort(order, (x, y) -> entropy[x] != entropy[y] ? Double.compare(entropy[y], entropy[x]) : Integer.compare(x, y));
    List<List<Integer>> tables = new ArrayList<>();
    for (int t = 0; t < m; t++) tables.add(new ArrayList<>());
    for (int i = 0; i < bits; i++) {
      int round = i / m, pos = i % m;
      tables.get(round % 2 == 0 ? pos : m - 1 - pos).add(order[i]);
    }
    int[][] tb = new int[m][];
    for (int t = 0; t < m; t++) tb[t] = tables.get(t).stream().mapToInt(Integer::intValue).sorted().toArray();
    return new SubstringPlan(bits, radius, tb);
  }

  public int tables() {
    return tableBits.length;
  }

  public int bits() {
    return bits;
  }

  public int radius() {
    return radius;
  }

  /** Substring radius {@code floor(radius / m)}: buckets within this many flips are probed. */
  public int rho() {
    return rho;
  }

  public int width(int t) {
    return tableBits[t].length;
  }

  /** The key of {@code code} in table {@code t}. */
  public long[] key(long[] code, int t) {
    int[] tb = tableBits[t];
    long[] key = new long[(tb.length + 63) >>> 6];
    for (int i = 0; i < tb.length; i++) {
      int b = tb[i];
      if ((code[b >>> 6] >>> (b & 63) & 1) != 0) key[i >>> 6] |= 1L << (i & 63);
    }
    return key;
  }

  /** Hamming distance of two codes on the bits of table {@code t}. */
  public int substringDistance(long[] a, long[] b, int t) {
    return Hamming.maskedDistance(a, 0, b, 0, masks[t], a.length);
  }

  /** True if some table before {@code t} puts the two codes within {@code rho}: the pair belongs to that table. */
  public boolean seenEarlier(long[] a, long[] b, int t) {
    for (int s = 0; s < t; s++) if (substringDistance(a, b, s) <= rho) return true;
    return false;
  }

  /**
   * Calls {@code out} with every key within {@code 1..rho} flips of {@code key} in table {@code t}
   * and the number of flips (combinations of bit positions in lexicographic order).
   */
  public void forEachProbe(long[] key, int t, ProbeSink out) {
    int w = width(t);
    for (int r = 1; r <= Math.min(rho, w); r++) {
      int[] pos = new int[r];
      for (int i = 0; i < r; i++) pos[i] = i;
      while (true) {
        long[] k = key.clone();
        for (int p : pos) k[p >>> 6] ^= 1L << (p & 63);
        out.probe(k, r);
        int i = r - 1;
        while (i >= 0 && pos[i] == w - r + i) i--;
        if (i < 0) break;
        pos[i]++;
        for (int j = i + 1; j < r; j++) pos[j] = pos[j - 1] + 1;
      }
    }
  }

  /** Receives probe keys. */
  @FunctionalInterface
  public interface ProbeSink {
    void probe(long[] key, int flips);
  }

  /**
   * {@link #keysPerCode()} of any plan of {@code m} tables over {@code bits} bits for {@code radius}
   * (every plan here deals the bits evenly: {@code bits % m} tables one bit wider than the others),
   * known before a sample is read.
   */
  static double keysPerCode(int bits, int radius, int m) {
    int narrow = bits / m, wide = bits % m, rho = radius / m;
    return wide * keys(narrow + 1, rho) + (m - wide) * keys(narrow, rho);
  }

  private static double keys(int width, int rho) {
    double s = 0;
    for (int r = 0; r <= Math.min(rho, width); r++) s += binomial(width, r);
    return s;
  }

  /** Keys emitted per code: {@code sum_t sum_{r <= rho} C(width_t, r)}. */
  public double keysPerCode() {
    double s = 0;
    for (int t = 0; t < tables(); t++) for (int r = 0; r <= Math.min(rho, width(t)); r++) s += binomial(width(t), r);
    return s;
  }
}
