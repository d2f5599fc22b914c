package io.actindex.index.mih;

import io.actindex.core.CodeBlock;
import io.actindex.core.Hamming;
import java.util.Arrays;

/**
 * Exact self-join of a code set: every pair of ordinals {@code a < b} whose codes are within
 * Hamming distance {@code radius}, each pair exactly once, plus the same search for outside codes
 * ({@link #forEachMatch}).
 *
 * <p>How: identical codes are grouped first ({@link DistinctCodes}, one hashing pass; the whole
 * join when the radius is 0). The distinct codes are cut into {@code m} substrings (a {@link
 * BitPlan}: constant bits dropped, entropy-balanced) with one {@link SubstringTable} each. By the
 * pigeonhole principle two codes within {@code radius} agree within {@code rho = floor(radius/m)}
 * on at least one substring (Norouzi, Punjani & Fleet, "Fast search in Hamming space with
 * multi-index hashing", CVPR 2012, Prop. 1), so the candidates of a code are the members of its own
 * bucket and of the buckets within {@code rho} flips, in every table; each is verified on the full
 * code. A pair is kept only from the first table in which its substring distance is at most
 * {@code rho}, so no set of seen pairs is needed. When {@code radius + 1} tables can hold more
 * than 32 bits each, {@code m = radius + 1} (so {@code rho = 0}) and each table keys on a hash of
 * several substrings: the widest keys the pigeonhole allows, hence the smallest buckets (measured on
 * 100k ReLU-like 256-bit codes at radius 4: 5 tables of 32 bits meet about 500 candidates per
 * code). Otherwise {@code m} comes from a cost model (probes times expected bucket size). A plain
 * scan over the distinct codes replaces the tables when they would not prune.
 *
 * <p>Output is streamed through {@link OrderedPairs}: deterministic order whatever the thread count
 * (by distinct code, see {@link #forEachPair}), memory independent of the number of pairs.
 */
public final class SelfJoin {
  /** Progress callback: {@code done} of {@code total} units. */
  @FunctionalInterface
  public interface Progress {
    void update(long done, long total);
  }

  private static final int TASK = 1024;

  private final DistinctCodes distinct;
  private final int radius;
  private final BitPlan plan; // null: no tables (radius 0, at most one distinct code, or the scan)
  private final boolean scan;
  private final SubstringTable[] tables;
  private final int m, rho;
  private final int group, substrings; // substrings per table (block), and in all
  private final int[] keys; // distinct u, substring p -> keys[u * substrings + p]
  private final int[] own; // the bucket of u's own key in table t: own[u * m + t]

  private SelfJoin(DistinctCodes distinct, int radius, BitPlan plan, boolean scan, int group, SubstringTable[] tables, int[] keys,
      int[] own) {
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
    this.own = own;
  }

  private static SelfJoin without(DistinctCodes d, int radius, boolean scan) {
    return new SelfJoin(d, radius, null, scan, 1, new SubstringTable[0], new int[0], new int[0]);
  }

  /** The join of {@code codes} within {@code radius}, tables chosen automatically. */
  public static SelfJoin build(CodeBlock codes, int radius) {
    return build(codes, radius, SearchPlanOptions.defaults());
  }

  /**
   * The join under {@code opts}: {@code substrings} forces the table count (0 = cost model), strategy
   * SCAN forces the scan over distinct codes, TABLES forbids it, AUTO decides.
   */
  public static SelfJoin build(CodeBlock codes, int radius, SearchPlanOptions opts) {
    if (radius < 0) throw new IllegalArgumentException("radius must be >= 0, got " + radius);
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
    int[] keys = new int[Math.multiplyExact(n, p)], own = new int[Math.multiplyExact(n, m)], keyOf = new int[n];
    for (int v = 0; v < n; v++) for (int j = 0; j < p; j++) keys[v * p + j] = plan.key(data, v * w, j);
    SubstringTable[] tables = new SubstringTable[m];
    double perCode = 0;
    for (int t = 0; t < m; t++) {
      for (int v = 0; v < n; v++) keyOf[v] = tableKey(keys, v * p, t, group, p);
      tables[t] = SubstringTable.build(group == 1 ? plan.width(t) : 32, keyOf);
      for (int v = 0; v < n; v++) own[v * m + t] = tables[t].bucket(keyOf[v]);
      for (int b = 0; b < tables[t].buckets(); b++) {
        double s = tables[t].offsets[b + 1] - tables[t].offsets[b];
        perCode += s * s / n;
      }
    }
    // measured own-bucket candidates per code; the scan costs n per code
    if (opts.strategy() == SearchPlanOptions.Strategy.AUTO && radius / m == 0 && perCode > n / 2.0) return without(d, radius, true);
    return new SelfJoin(d, radius, plan, false, group, tables, keys, own);
  }

  /**
   * The key of table {@code t}: the substring's own key when a table is one substring, else a hash
   * of its {@code group} substring keys (equal substrings give equal hashes; collisions only add
   * candidates, which are verified).
   */
  private static int tableKey(int[] keys, int off, int t, int group, int p) {
    if (group == 1) return keys[off + t];
    long h = 0x9E3779B97F4A7C15L;
    for (int j = t * group, end = Math.min(p, j + group); j < end; j++) {
      h = (h ^ (keys[off + j] & 0xFFFFFFFFL)) * 0xBF58476D1CE4E5B9L;
      h ^= h >>> 29;
    }
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
   * Every pair of distinct codes {@code u < v} within the radius (numbers as in {@link #distinct()}),
   * in ascending {@code (u, v)}, to {@code sink} on the calling thread.
   */
  public void forEachDistinctPair(int threads, PairSink sink, Progress progress) {
    forEachPair(threads, null, sink, progress);
  }

  /**
   * Every pair of ordinals {@code a < b} within the radius to {@code pairs}, and every pair of
   * distinct codes to {@code distinctPairs} (either may be null), on the calling thread, in one pass
   * over the distinct codes {@code u} in ascending order: first the pairs of ordinals holding {@code
   * u} itself (distance 0), then for each distinct neighbour {@code v > u} in ascending order the
   * pair {@code (u, v)} and the pairs of their holders (by holder of {@code u}, then of {@code v}).
   * So the order is deterministic whatever the thread count, but not sorted by ordinal. Memory does
   * not grow with the number of pairs.
   */
  public void forEachPair(int threads, PairSink pairs, PairSink distinctPairs, Progress progress) {
    int n = distinct.count();
    int tasks = (n + TASK - 1) / TASK;
    long[] data = distinct.codes().words();
    int w = distinct.codes().wordsPerCode();
    PairSink sink = (a, b, d) -> {
      if (a < 0) distinctPairs.pair(~a, b, d);
      else pairs.pair(a, b, d);
    };
    OrderedPairs.run(tasks, threads, (task, out) -> {
      Neighbours nb = new Neighbours();
      for (int u = task * TASK, end = Math.min(n, u + TASK); u < end; u++) {
        int hu = distinct.holders(u);
        if (pairs != null)
          for (int x = 0; x < hu; x++)
            for (int y = x + 1; y < hu; y++) out.pair(distinct.holder(u, x), distinct.holder(u, y), 0);
        neighbours(data, u * w, keys, u * substrings, u, u + 1, nb);
        for (int i = 0; i < nb.size; i++) {
          int v = nb.v(i), d = nb.d(i);
          if (distinctPairs != null) out.pair(~u, v, d);
          if (pairs == null) continue;
          for (int x = 0, hv = distinct.holders(v); x < hu; x++) {
            int a = distinct.holder(u, x);
            for (int y = 0; y < hv; y++) {
              int b = distinct.holder(v, y);
              if (a < b) out.pair(a, b, d);
              else out.pair(b, a, d);
            }
          }
        }
      }
    }, sink, progress == null ? null : done -> progress.update(done, tasks));
  }

  /**
   * For each row {@code q} of {@code queries} (same width as the joined codes), every ordinal within
   * the radius: {@code sink.pair(q, ordinal, distance)}, in ascending {@code (q, ordinal)}.
   */
  public void forEachMatch(CodeBlock queries, int threads, PairSink sink, Progress progress) {
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
        } else neighbours(data, q * w, qKeys, 0, -1, 0, nb);
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
   * Distinct codes {@code v >= minV}, {@code v != self}, within the radius of the code at {@code
   * q[qOff..]} (whose substring keys are {@code qKeys[kOff..kOff+substrings)}), sorted by {@code v}.
   */
  private void neighbours(long[] q, int qOff, int[] qKeys, int kOff, int self, int minV, Neighbours out) {
    out.size = 0;
    if (radius == 0) return;
    long[] data = distinct.codes().words();
    int w = distinct.codes().wordsPerCode(), n = distinct.count();
    if (plan == null) {
      if (!scan) return;
      for (int v = minV; v < n; v++) {
        if (v == self) continue;
        int d = Hamming.distanceBounded(q, qOff, data, v * w, w, radius);
        if (d <= radius) out.add(v, d);
      }
      return;
    }
    for (int t = 0; t < m; t++) {
      SubstringTable tab = tables[t];
      int key = tableKey(qKeys, kOff, t, group, substrings);
      long limit = ProbeEnumerator.limit(tab.width);
      for (int r = 0; r <= rho; r++)
        for (long f = ProbeEnumerator.first(r); f < limit; f = ProbeEnumerator.next(f)) {
          int b = r == 0 && self >= 0 ? own[self * m + t] : tab.bucket(key ^ (int) f);
          if (b < 0) continue;
          int from = tab.offsets[b], to = tab.offsets[b + 1];
          if (minV > 0) from = lowerBound(tab.ids, from, to, minV);
          for (int p = from; p < to; p++) {
            int v = tab.ids[p];
            if (v == self) continue;
            int d = Hamming.distanceBounded(q, qOff, data, v * w, w, radius);
            if (d <= radius && !seenEarlier(qKeys, kOff, v, t)) out.add(v, d);
          }
        }
    }
    out.sort();
  }

  /** True if an earlier table than {@code t} already puts {@code v} within rho of the query. */
  private boolean seenEarlier(int[] qKeys, int kOff, int v, int t) {
    int base = v * substrings;
    if (group == 1) {
      for (int s = 0; s < t; s++) if (Integer.bitCount(qKeys[kOff + s] ^ keys[base + s]) <= rho) return true;
      return false;
    }
    for (int s = 0; s < t; s++) { // rho is 0: table s qualifies if all its substrings are equal
      boolean equal = true;
      for (int j = s * group, end = Math.min(substrings, j + group); j < end && equal; j++) equal = qKeys[kOff + j] == keys[base + j];
      if (equal) return true;
    }
    return false;
  }

  private static int lowerBound(int[] a, int from, int to, int x) {
    while (from < to) {
      int mid = (from + to) >>> 1;
      if (a[mid] < x) from = mid + 1;
      else to = mid;
    }
    return from;
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
