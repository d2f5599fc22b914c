package io.actindex.index.mih;

import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hamming;
import java.util.Arrays;

/**
 * For each row of an outside batch of codes, every code of a joined set within Hamming distance
 * {@code radius} ({@code dupes --against}): "which rows of this batch already sit in the data, to
 * the model".
 *
 * <p>How: identical codes of the set are grouped first ({@link DistinctCodes}). The distinct codes
 * are cut into {@code m} substrings (a {@link BitPlan}: constant bits dropped, entropy-balanced)
 * with one {@link SubstringTable} each. By the pigeonhole principle a code within {@code radius} of
 * a query agrees with it within {@code rho = floor(radius/m)} on at least one substring (Norouzi,
 * Punjani & Fleet, "Fast search in Hamming space with multi-index hashing", CVPR 2012, Prop. 1), so
 * the candidates of a query are the members of its bucket and of the buckets within {@code rho}
 * flips, in every table; each is verified on the full code, and kept only from the first table in
 * which its substring distance is at most {@code rho} (no set of seen codes). When {@code radius + 1}
 * tables can hold more than 32 bits each, {@code m = radius + 1} ({@code rho = 0}) and each table
 * keys on a hash of several substrings; otherwise {@code m} comes from a cost model (probes times
 * expected bucket size). A plain scan over the distinct codes replaces the tables when they would
 * not prune. The whole set joined with itself is {@link SelfJoin}, which needs no probing.
 */
public final class RadiusMatcher {
  private static final int TASK = 1024;

  private final DistinctCodes distinct;
  private final int radius;
  private final BitPlan plan; // null: no tables (radius 0, at most one distinct code, or the scan)
  private final boolean scan;
  private final SubstringTable[] tables;
  private final int m, rho;
  private final int group, substrings; // substrings per table (block), and in all
  private final int[] keys; // distinct u, substring p -> keys[u * substrings + p]

  private RadiusMatcher(DistinctCodes distinct, int radius, BitPlan plan, boolean scan, int group, SubstringTable[] tables, int[] keys) {
    this.distinct = distinct;
    this.radius = radius;
    this.plan = plan;
    this.scan = scan;
    this.tables = tables;
    this.m = tables.length;
    this.group = group;
    this.substrings = plan == null ? 0 : plan.tables();
    this.rho = m == 0 ? 0 : radius / m;
    this.keys = keys;
  }

  private static RadiusMatcher without(DistinctCodes d, int radius, boolean scan) {
    return new RadiusMatcher(d, radius, null, scan, 1, new SubstringTable[0], new int[0]);
  }

  /** The matcher of {@code codes} within {@code radius}, tables chosen automatically. */
  public static RadiusMatcher build(CodeBlock codes, int radius) {
    return build(codes, radius, SearchPlanOptions.defaults());
  }

  /**
   * The matcher under {@code opts}: {@code substrings} forces the table count (0 = cost model), strategy
   * SCAN forces the scan over distinct codes, TABLES forbids it, AUTO decides.
   */
  public static RadiusMatcher build(CodeBlock codes, int radius, SearchPlanOptions opts) {
    if (radius < 0) throw new BadParameterException("radius", " must be at least 0, got " + radius);
    DistinctCodes d = DistinctCodes.of(codes);
    CodeBlock u = d.codes();
    int n = u.size();
    if (radius == 0 || n <= 1) return without(d, radius, radius > 0);
    int k = 0;
    for (long c : BitPlan.bitCounts(u)) if (!opts.dropConstantBits() || (c != 0 && c != n)) k++;
    int m, group = 1;
    if (opts.substrings() > 0) m = Math.min(opts.substrings(), k);
    else if (radius + 1 <= k && (k + radius) / (radius + 1) > SearchPlanOptions.MAX_SUBSTRING_BITS) {
      // radius + 1 tables, each wider than one substring may be: a table keys on a hash of several
      // substrings (probed at substring radius 0 only, so hashing loses nothing)
      m = radius + 1;
      group = ((k + radius) / (radius + 1) + SearchPlanOptions.MAX_SUBSTRING_BITS - 1) / SearchPlanOptions.MAX_SUBSTRING_BITS;
    } else m = substrings(k, radius, n);
    boolean scan = opts.strategy() == SearchPlanOptions.Strategy.SCAN
        || (opts.strategy() == SearchPlanOptions.Strategy.AUTO && group == 1 && estimate(k, m, radius, n) > n / 2.0);
    if (scan || k == 0) return without(d, radius, true);
    BitPlan plan = BitPlan.choose(u, opts.withSubstrings(m * group));
    int p = plan.tables();
    m = (p + group - 1) / group;
    if (group > 1 && radius / m > 0) throw new IllegalStateException("hashed tables need substring radius 0; " + m + " tables for radius " + radius);
    int w = u.wordsPerCode();
    long[] data = u.words();
    int[] keys = new int[Math.multiplyExact(n, p)], keyOf = new int[n];
    for (int v = 0; v < n; v++) for (int j = 0; j < p; j++) keys[v * p + j] = plan.key(data, v * w, j);
    SubstringTable[] tables = new SubstringTable[m];
    double perCode = 0;
    for (int t = 0; t < m; t++) {
      for (int v = 0; v < n; v++) keyOf[v] = tableKey(keys, v * p, t, group, p);
      tables[t] = SubstringTable.build(group == 1 ? plan.width(t) : 32, keyOf);
      for (int b = 0; b < tables[t].buckets(); b++) {
        double s = tables[t].offsets[b + 1] - tables[t].offsets[b];
        perCode += s * s / n;
      }
    }
    // measured own-bucket candidates per query; the scan costs n per query
    if (opts.strategy() == SearchPlanOptions.Strategy.AUTO && radius / m == 0 && perCode > n / 2.0) return without(d, radius, true);
    return new RadiusMatcher(d, radius, plan, false, group, tables, keys);
  }

  /**
   * The key of table {@code t}: the substring's own key when a table is one substring, else a hash
   * of its {@code group} substring keys (equal substrings give equal hashes; collisions only add
   * candidates, which are verified).
   */
  private static int tableKey(int[] keys, int off, int t, int group, int p) {
    if (group == 1) return keys[off + t];
    long h = SelfJoin.SEED;
    for (int j = t * group, end = Math.min(p, j + group); j < end; j++) h = SelfJoin.mix(h, keys[off + j]);
    return (int) (h ^ (h >>> 32));
  }

  /**
   * The table count with the lowest estimated cost per code: {@code m} tables of {@code k/m} bits,
   * each probed at {@code sum_{r <= rho} C(k/m, r)} keys, each key holding about {@code n / 2^(k/m)}
   * codes (uniform estimate). More than {@code radius + 1} tables never helps ({@code rho} is 0
   * already), fewer than {@code k / 32} cannot hold the bits.
   */
  static int substrings(int k, int radius, int n) {
    int lo = Math.max(1, (k + SearchPlanOptions.MAX_SUBSTRING_BITS - 1) / SearchPlanOptions.MAX_SUBSTRING_BITS);
    int hi = Math.max(lo, Math.min(k, radius + 1));
    int best = lo;
    double bestCost = Double.POSITIVE_INFINITY;
    for (int m = lo; m <= hi; m++) {
      double c = estimate(k, m, radius, n);
      if (c < bestCost) {
        bestCost = c;
        best = m;
      }
    }
    return best;
  }

  private static double estimate(int k, int m, int radius, int n) {
    if (m <= 0 || k == 0) return n;
    int w = Math.max(1, k / m), r = radius / m;
    double probes = 0;
    for (int i = 0; i <= Math.min(r, w); i++) probes += ProbeEnumerator.count(w, i);
    return m * probes * (1 + n / Math.pow(2, w));
  }

  public int radius() {
    return radius;
  }

  public DistinctCodes distinct() {
    return distinct;
  }

  /** Number of hash tables in use (0 when the join runs without tables). */
  public int tables() {
    return m;
  }

  /** True when the distinct codes are compared by a plain scan instead of the tables. */
  public boolean scans() {
    return scan;
  }

  /**
   * For each row {@code q} of {@code queries} (same width as the joined codes), every ordinal within
   * the radius: {@code sink.pair(q, ordinal, distance)}, in ascending {@code (q, ordinal)}.
   */
  public void forEachMatch(CodeBlock queries, int threads, PairSink sink, SelfJoin.Progress progress) {
    int w = distinct.codes().wordsPerCode();
    if (queries.wordsPerCode() != w || queries.layout().bits() != distinct.codes().layout().bits())
      throw new IllegalArgumentException("queries have " + queries.layout().bits() + " bits, the joined codes "
          + distinct.codes().layout().bits());
    int n = queries.size();
    int tasks = (n + TASK - 1) / TASK;
    long[] data = queries.words();
    OrderedPairs.run(tasks, threads, (task, out) -> {
      Neighbours nb = new Neighbours(), partners = new Neighbours();
      int[] qKeys = new int[substrings];
      for (int q = task * TASK, end = Math.min(n, q + TASK); q < end; q++) {
        for (int j = 0; j < substrings; j++) qKeys[j] = plan.key(data, q * w, j);
        if (radius == 0) {
          nb.size = 0;
          int v = distinct.find(data, q * w);
          if (v >= 0) nb.add(v, 0);
        } else neighbours(data, q * w, qKeys, nb);
        partners.size = 0;
        for (int i = 0; i < nb.size; i++) {
          int v = nb.v(i);
          for (int h = 0, c = distinct.holders(v); h < c; h++) partners.add(distinct.holder(v, h), nb.d(i));
        }
        if (nb.size > 1) partners.sort();
        for (int i = 0; i < partners.size; i++) out.pair(q, partners.v(i), partners.d(i));
      }
    }, sink, progress == null ? null : done -> progress.update(done, tasks));
  }

  /**
   * Distinct codes within the radius of the code at {@code q[qOff..]} (whose substring keys are
   * {@code qKeys}), sorted by {@code v}.
   */
  private void neighbours(long[] q, int qOff, int[] qKeys, Neighbours out) {
    out.size = 0;
    if (radius == 0) return;
    long[] data = distinct.codes().words();
    int w = distinct.codes().wordsPerCode(), n = distinct.count();
    if (plan == null) {
      if (!scan) return;
      for (int v = 0; v < n; v++) {
        int d = Hamming.distanceBounded(q, qOff, data, v * w, w, radius);
        if (d <= radius) out.add(v, d);
      }
      return;
    }
    for (int t = 0; t < m; t++) {
      SubstringTable tab = tables[t];
      int key = tableKey(qKeys, 0, t, group, substrings);
      long limit = ProbeEnumerator.limit(tab.width);
      for (int r = 0; r <= rho; r++)
        for (long f = ProbeEnumerator.first(r); f < limit; f = ProbeEnumerator.next(f)) {
          int b = tab.bucket(key ^ (int) f);
          if (b < 0) continue;
          for (int p = tab.offsets[b], to = tab.offsets[b + 1]; p < to; p++) {
            int v = tab.ids[p];
            int d = Hamming.distanceBounded(q, qOff, data, v * w, w, radius);
            if (d <= radius && !seenEarlier(qKeys, v, t)) out.add(v, d);
          }
        }
    }
    out.sort();
  }

  /** True if an earlier table than {@code t} already puts {@code v} within rho of the query. */
  private boolean seenEarlier(int[] qKeys, int v, int t) {
    int base = v * substrings;
    if (group == 1) {
      for (int s = 0; s < t; s++) if (Integer.bitCount(qKeys[s] ^ keys[base + s]) <= rho) return true;
      return false;
    }
    for (int s = 0; s < t; s++) { // rho is 0: table s qualifies if all its substrings are equal
      boolean equal = true;
      for (int j = s * group, end = Math.min(substrings, j + group); j < end && equal; j++) equal = qKeys[j] == keys[base + j];
      if (equal) return true;
    }
    return false;
  }

  /** A growable list of (v, distance), packed as {@code v << 32 | distance}. */
  private static final class Neighbours {
    long[] packed = new long[64];
    int size;

    void add(int v, int d) {
      if (size == packed.length) packed = Arrays.copyOf(packed, size * 2);
      packed[size++] = (long) v << 32 | d;
    }

    void sort() {
      Arrays.sort(packed, 0, size);
    }

    int v(int i) {
      return (int) (packed[i] >>> 32);
    }

    int d(int i) {
      return (int) packed[i];
    }
  }
}
