package io.actindex.index.mih;

import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hamming;
import io.actindex.core.ScanKernel;
import java.util.Arrays;
import java.util.function.LongConsumer;

/**
 * Exact self-join of a code set: every pair of ordinals {@code a < b} whose codes are within
 * Hamming distance {@code radius}, each pair exactly once, streamed.
 *
 * <p>How: identical codes are grouped first ({@link DistinctCodes}, one hashing pass; the whole
 * join when the radius is 0). The distinct codes are cut into {@code m = radius + s} disjoint parts
 * (a {@link BitPlan} drawn on a sample: entropy-balanced, constant bits left out). Two codes within
 * {@code radius} differ in at most {@code radius} parts, so they agree exactly on at least {@code s}
 * parts: on all parts of at least one {@code s}-subset. Every {@code s}-subset of the parts is a
 * table keyed on those parts together, so the candidate pairs of the join are the pairs that share
 * a bucket in some table (the partition-and-enumerate scheme of Arasu, Ganti & Kaushik, "Efficient
 * exact set-similarity joins", VLDB 2006, section 4; {@code s = 1} is the pigeonhole of
 * multi-index hashing, Norouzi, Punjani & Fleet, CVPR 2012). Wider keys ({@code s > 1}) make the
 * buckets of clustered ReLU codes far smaller at the price of {@code C(m, s)} tables; {@code s} is
 * chosen per join by counting, on a sample, the candidate pairs each choice would verify.
 *
 * <p>A pair is kept only in the table of the {@code s} lowest-numbered parts on which it agrees, so
 * no set of seen pairs is needed: the test costs a few integer comparisons and runs before the
 * distance. One table at a time is built: entries {@code (hash of the key, code)} are spread by
 * their top hash bits into partitions, each partition is sorted and its runs of equal keys are
 * joined after copying the members' codes and parts side by side (cache-friendly), so memory is
 * the parts ({@code m} ints per distinct code) plus two longs per distinct code. A plain scan over
 * the distinct codes replaces the tables when it costs less, and always for radii of {@link
 * #MAX_PARTS} or more.
 *
 * <p>Output is streamed through {@link OrderedPairs}: memory independent of the number of pairs, the
 * same order whatever the thread count (see {@link #forEachPair}).
 */
public final class SelfJoin {
  /** Progress callback: {@code done} of {@code total} units. */
  @FunctionalInterface
  public interface Progress {
    void update(long done, long total);
  }

  /** Distinct codes per task of the identical-pairs pass and of the scan. */
  private static final int TASK = 1024;
  /** At most 2^TASK_BITS tasks per table (each a run of partitions). */
  private static final int TASK_BITS = 6;
  /** Distinct codes sampled to choose {@code s}. */
  static final int SAMPLE = 32_768;
  /** Most tables a join may use (when choosing {@code s} itself). */
  static final int MAX_TABLES = 256;
  /** Most parts (table subsets are int bit masks); larger radii join by the scan. */
  static final int MAX_PARTS = 30;
  /**
   * Cost model, CPU nanoseconds per code and table (hash, place, sort), per candidate pair in a
   * bucket, per pair of the scan; measured roughly on 300k ReLU-like 256-bit codes on a busy machine
   * (only their ratios matter).
   */
  private static final double TABLE_NS_PER_CODE = 80, CANDIDATE_NS = 6, SCAN_NS_PER_PAIR = 4;

  private final DistinctCodes distinct;
  private final int radius;
  private final boolean scan;
  private final int m, s; // parts, parts per key; 0 when there are no tables
  private final int[] parts; // part keys of distinct code u: parts[u * m .. u * m + m)
  private final int[] subsets; // table t: bit mask of its s parts, in ascending order of the mask

  private SelfJoin(DistinctCodes distinct, int radius, boolean scan, int m, int s, int[] parts) {
    this.distinct = distinct;
    this.radius = radius;
    this.scan = scan;
    this.m = m;
    this.s = s;
    this.parts = parts;
    this.subsets = subsets(m, s);
  }

  /** The join of {@code codes} within {@code radius}, plan chosen automatically. */
  public static SelfJoin build(CodeBlock codes, int radius) {
    return build(codes, radius, 0, SearchPlanOptions.Strategy.AUTO);
  }

  /**
   * The join with {@code keyParts} parts per table key ({@code s}; 0 = chosen from a sample).
   * Strategy SCAN forces the scan over distinct codes; TABLES forbids it unless no table plan exists
   * ({@code radius + 1} parts need that many non-constant bits); AUTO decides.
   */
  public static SelfJoin build(CodeBlock codes, int radius, int keyParts, SearchPlanOptions.Strategy strategy) {
    if (radius < 0) throw new BadParameterException("radius", " must be at least 0, got " + radius);
    if (keyParts < 0) throw new BadParameterException("keyParts", " must be 0 (automatic) or more, got " + keyParts);
    DistinctCodes d = DistinctCodes.of(codes);
    int n = d.count();
    if (radius == 0 || n <= 1) return new SelfJoin(d, radius, false, 0, 0, new int[0]);
    if (strategy == SearchPlanOptions.Strategy.SCAN) return new SelfJoin(d, radius, true, 0, 0, new int[0]);
    CodeBlock sample = sample(d.codes());
    int informative = 0;
    for (long c : BitPlan.bitCounts(sample)) if (c != 0 && c != sample.size()) informative++;
    double bestCost = strategy == SearchPlanOptions.Strategy.TABLES ? Double.POSITIVE_INFINITY : SCAN_NS_PER_PAIR * n * (n - 1.0) / 2;
    Parts best = null;
    for (int s = keyParts > 0 ? keyParts : 1; radius + s <= Math.min(informative, MAX_PARTS); s++) {
      int m = radius + s;
      // more tables than the best plan can afford, even with no candidates at all: stop drafting
      if (keyParts == 0 && (binomial(m, s) > MAX_TABLES || binomial(m, s) * n * TABLE_NS_PER_CODE >= bestCost)) break;
      Parts p = Parts.choose(sample, m, informative);
      double pairs = p.collisions(sample, s) * ((double) n * (n - 1)) / ((double) sample.size() * (sample.size() - 1));
      double cost = binomial(m, s) * n * TABLE_NS_PER_CODE + pairs * CANDIDATE_NS;
      if (keyParts > 0 || cost < bestCost) {
        bestCost = cost;
        best = p;
      } else if (best != null) break; // costs fall, then rise with s
      if (keyParts > 0) break;
    }
    if (best == null) return new SelfJoin(d, radius, true, 0, 0, new int[0]);
    return new SelfJoin(d, radius, false, best.count(), best.count() - radius, best.keys(d.codes()));
  }

  /** Up to {@link #SAMPLE} distinct codes, evenly spaced (all of them when there are fewer). */
  private static CodeBlock sample(CodeBlock u) {
    int n = u.size(), w = u.wordsPerCode();
    if (n <= SAMPLE) return u;
    long[] words = new long[SAMPLE * w];
    for (int i = 0; i < SAMPLE; i++) System.arraycopy(u.words(), (int) ((long) i * n / SAMPLE) * w, words, i * w, w);
    return new CodeBlock(u.layout(), SAMPLE, words);
  }

  static double binomial(int n, int k) {
    return ProbeEnumerator.count(n, k);
  }

  /** The s-subsets of {@code m} parts as bit masks, ascending; empty without tables. */
  private static int[] subsets(int m, int s) {
    if (m == 0) return new int[0];
    int[] out = new int[(int) binomial(m, s)];
    int i = 0;
    for (long f = ProbeEnumerator.first(s); f < ProbeEnumerator.limit(m); f = ProbeEnumerator.next(f)) out[i++] = (int) f;
    return out;
  }

  public int radius() {
    return radius;
  }

  public DistinctCodes distinct() {
    return distinct;
  }

  /** Number of tables the join runs through (0 when it runs without tables). */
  public int tables() {
    return subsets.length;
  }

  /** Parts per table key ({@code s}); 0 without tables. */
  public int keyParts() {
    return s;
  }

  /** True when the distinct codes are compared by a plain scan instead of the tables. */
  public boolean scans() {
    return scan;
  }

  /** Every pair of distinct codes {@code u < v} within the radius, in the order of {@link #forEachPair}. */
  public void forEachDistinctPair(int threads, PairSink sink, Progress progress) {
    forEachPair(threads, null, sink, progress);
  }

  /**
   * Every pair of ordinals {@code a < b} within the radius to {@code pairs}, and every pair of
   * distinct codes {@code u < v} to {@code distinctPairs} (either may be null), on the calling
   * thread. Order: first the pairs of ordinals holding one same code (by distinct code, holders
   * ascending); then, table by table and bucket by bucket, each pair of distinct codes followed by
   * the pairs of their holders. The order is deterministic whatever the thread count, but not
   * sorted. Memory does not grow with the number of pairs.
   */
  public void forEachPair(int threads, PairSink pairs, PairSink distinctPairs, Progress progress) {
    int n = distinct.count();
    int codeTasks = (n + TASK - 1) / TASK, partitionBits = partitionBits(n), taskBits = Math.min(partitionBits, TASK_BITS);
    int perTable = 1 << taskBits;
    long total = (pairs != null ? codeTasks : 0) + (scan ? codeTasks : (long) subsets.length * perTable);
    long[] done = {0};
    LongConsumer tick = progress == null ? null : t -> progress.update(done[0] + t, total);
    PairSink sink = (a, b, d) -> {
      if (a < 0) distinctPairs.pair(~a, b, d);
      else pairs.pair(a, b, d);
    };
    if (pairs != null) {
      OrderedPairs.run(codeTasks, threads, (task, out) -> {
        for (int u = task * TASK, end = Math.min(n, u + TASK); u < end; u++)
          for (int x = 0, hu = distinct.holders(u); x < hu; x++)
            for (int y = x + 1; y < hu; y++) out.pair(distinct.holder(u, x), distinct.holder(u, y), 0);
      }, pairs, tick);
      done[0] += codeTasks;
    }
    if (radius == 0) return;
    Emit emit = new Emit(pairs != null, distinctPairs != null);
    if (scan) {
      OrderedPairs.run(codeTasks, threads, (task, out) -> scan(task, out, emit), sink, tick);
      return;
    }
    Table table = new Table(n, distinct.codes().wordsPerCode(), m, partitionBits);
    int partitionsPerTask = 1 << partitionBits - taskBits;
    for (int subset : subsets) {
      table.fill(subset, Math.max(1, Math.min(threads, n >>> 10)));
      OrderedPairs.run(perTable, threads, (task, out) -> {
        Scratch sc = new Scratch();
        for (int q = task * partitionsPerTask, end = q + partitionsPerTask; q < end; q++) table.join(q, sc, out, emit);
      }, sink, tick);
      done[0] += perTable;
    }
  }

  /** What to emit per distinct pair. */
  private record Emit(boolean ordinals, boolean distinctPairs) {}

  /** Partitions per table: about 2,048 distinct codes each (their codes stay in cache), at most 1,024. */
  private static int partitionBits(int n) {
    return Math.max(0, Math.min(10, 31 - Integer.numberOfLeadingZeros(Math.max(1, n >>> 11))));
  }

  /** Start and step of the hash that combines 32-bit part keys (also {@link RadiusMatcher}'s wide keys). */
  static final long SEED = 0x9E3779B97F4A7C15L;

  /** A 64-bit hash of the parts in {@code subset} of the part keys at {@code keys[base..base+m)}. */
  private static long keyHash(int[] keys, int base, int m, int subset) {
    long h = SEED;
    for (int p = 0; p < m; p++) if ((subset & (1 << p)) != 0) h = mix(h, keys[base + p]);
    h *= 0x94D049BB133111EBL;
    return h ^ (h >>> 31);
  }

  static long mix(long h, int key) {
    h = (h ^ (key & 0xFFFFFFFFL)) * 0xBF58476D1CE4E5B9L;
    return h ^ (h >>> 29);
  }

  /**
   * One table at a time, laid out for joining: every distinct code's entry {@code (hash of its key,
   * position)} and, beside it, its id, its code and the parts that decide ownership (the parts
   * below the table's top part: first those outside the subset, then those in it), grouped by the
   * top bits of the hash into partitions, so that joining a partition reads one contiguous stretch
   * of memory.
   */
  private final class Table {
    final int n, w, partitionBits;
    final long[] hashes, entries, codes;
    final int[] ids, solo, owned, from; // solo: the one ordinal holding the code, or -1
    int top, others, o, posBits;

    Table(int n, int w, int maxTop, int partitionBits) {
      this.n = n;
      this.w = w;
      this.partitionBits = partitionBits;
      hashes = new long[n];
      entries = new long[n];
      codes = new long[Math.multiplyExact(n, w)];
      ids = new int[n];
      solo = new int[n];
      owned = new int[Math.multiplyExact(n, maxTop)];
      from = new int[(1 << partitionBits) + 1];
    }

    private int partition(long h) {
      return partitionBits == 0 ? 0 : (int) (h >>> 64 - partitionBits);
    }

    /** Lays out the table of {@code subset}. */
    void fill(int subset, int threads) {
      top = 32 - Integer.numberOfLeadingZeros(subset);
      others = (1 << top) - 1 & ~subset;
      o = Integer.bitCount(others);
      // each thread hashes a stretch of codes and counts its partitions, then places its codes after
      // those of the stretches before it: positions ascend with u inside each partition
      int[][] count = new int[threads][from.length - 1];
      inParallel(threads, (t, lo, hi) -> {
        for (int u = lo; u < hi; u++) {
          hashes[u] = keyHash(parts, u * m, m, subset);
          count[t][partition(hashes[u])]++;
        }
      });
      int largest = 1;
      from[0] = 0;
      for (int p = 0; p + 1 < from.length; p++) {
        int size = 0;
        for (int t = 0; t < threads; t++) {
          int c = count[t][p];
          count[t][p] = from[p] + size;
          size += c;
        }
        largest = Math.max(largest, size);
        from[p + 1] = from[p] + size;
      }
      posBits = 32 - Integer.numberOfLeadingZeros(largest - 1);
      long[] data = distinct.codes().words();
      inParallel(threads, (t, lo, hi) -> {
        int[] next = count[t];
        for (int u = lo; u < hi; u++) {
          long h = hashes[u];
          int p = partition(h), at = next[p]++;
          entries[at] = h >>> posBits << posBits | (at - from[p]);
          ids[at] = u;
          solo[at] = distinct.holders(u) == 1 ? distinct.holder(u, 0) : -1;
          System.arraycopy(data, u * w, codes, at * w, w);
          int k = at * top;
          for (int q = 0; q < top; q++) if ((others & (1 << q)) != 0) owned[k++] = parts[u * m + q];
          for (int q = 0; q < top; q++) if ((subset & (1 << q)) != 0) owned[k++] = parts[u * m + q];
        }
      });
    }

    /** Runs {@code body(t, lo, hi)} for {@code threads} equal stretches of {@code [0, n)}, thread t on stretch t. */
    private void inParallel(int threads, Stretch body) {
      if (threads == 1) {
        body.run(0, 0, n);
        return;
      }
      Thread[] workers = new Thread[threads - 1];
      Throwable[] failed = new Throwable[threads];
      for (int t = 1; t < threads; t++) {
        int tt = t;
        workers[t - 1] = Thread.ofPlatform().name("actindex-join-fill").start(() -> {
          try {
            body.run(tt, (int) ((long) n * tt / threads), (int) ((long) n * (tt + 1) / threads));
          } catch (Throwable e) {
            failed[tt] = e;
          }
        });
      }
      body.run(0, 0, (int) ((long) n / threads));
      for (Thread x : workers) {
        try {
          x.join();
        } catch (InterruptedException e) {
          Thread.currentThread().interrupt();
          throw new IllegalStateException("interrupted", e);
        }
      }
      for (Throwable e : failed) if (e != null) throw new IllegalStateException("join worker failed", e);
    }

    /** Joins partition {@code p}: sorts its entries, then every bucket (run of equal hashes). */
    void join(int p, Scratch sc, PairSink out, Emit emit) {
      int lo = from[p], hi = from[p + 1];
      group(lo, hi, sc);
      long pos = (1L << posBits) - 1;
      for (int i = lo; i < hi; ) {
        int j = i + 1;
        while (j < hi && (entries[j] >>> posBits) == (entries[i] >>> posBits)) j++;
        if (j - i > 1) bucket(lo, i, j, pos, sc, out, emit);
        i = j;
      }
    }

    /**
     * Sorts the entries {@code [lo, hi)} of one partition: one counting pass on the 8 hash bits
     * below the partition's, then each of the 256 small groups sorted on its own (a radix step in
     * front of the sort; the entries are hashes, so the groups are even, except a large bucket).
     */
    private void group(int lo, int hi, Scratch sc) {
      int size = hi - lo;
      if (size < 512) {
        Arrays.sort(entries, lo, hi);
        return;
      }
      long[] tmp = sc.tmp(size);
      int[] start = sc.start;
      Arrays.fill(start, 0);
      int shift = 56 - partitionBits;
      for (int i = lo; i < hi; i++) start[(int) (entries[i] >>> shift & 255) + 1]++;
      for (int g = 0; g < 256; g++) start[g + 1] += start[g];
      for (int i = lo; i < hi; i++) tmp[start[(int) (entries[i] >>> shift & 255)]++] = entries[i];
      System.arraycopy(tmp, 0, entries, lo, size);
      for (int g = 0, from = lo; g < 256; g++) { // start[g] is now where group g ends
        int to = lo + start[g];
        if (to - from > 1) Arrays.sort(entries, from, to);
        from = to;
      }
    }

    /**
     * The pairs of one bucket (entries {@code [i, j)}) that this table owns: those whose lowest
     * {@code s} agreeing parts are the table's subset. So the parts below the subset's top part and
     * outside it must all differ, and the parts of the subset must agree (they do unless two keys'
     * hashes collided). Both are checked only for the few pairs within the radius.
     */
    private void bucket(int lo, int i, int j, long pos, Scratch sc, PairSink out, Emit emit) {
      int b = j - i;
      sc.fit(b, w, o);
      int[] at = sc.at, own = sc.own;
      long[] cs = sc.codes;
      for (int x = 0; x < b; x++) { // side by side: positions, codes, parts outside the subset
        int a = lo + (int) (entries[i + x] & pos);
        at[x] = a;
        System.arraycopy(codes, a * w, cs, x * w, w);
        System.arraycopy(owned, a * top, own, x * o, o);
      }
      int[] near = sc.near;
      for (int x = 0; x < b; x++) {
        next:
        for (int h = 0, found = ScanKernel.within(cs, x * w, cs, w, x + 1, b, radius, near); h < found; h++) {
          int y = near[h], d = Hamming.distanceBounded(cs, x * w, cs, y * w, w, radius);
          for (int q = 0, xo = x * o, yo = y * o; q < o; q++) if (own[xo + q] == own[yo + q]) continue next;
          for (int q = o, ao = at[x] * top, bo = at[y] * top; q < top; q++) if (owned[ao + q] != owned[bo + q]) continue next;
          int ea = at[x], eb = at[y];
          if (solo[ea] >= 0 && solo[eb] >= 0) { // the common case, without looking up holders
            if (emit.distinctPairs()) out.pair(~Math.min(ids[ea], ids[eb]), Math.max(ids[ea], ids[eb]), d);
            if (emit.ordinals()) out.pair(Math.min(solo[ea], solo[eb]), Math.max(solo[ea], solo[eb]), d);
          } else emit(Math.min(ids[ea], ids[eb]), Math.max(ids[ea], ids[eb]), d, out, emit);
        }
      }
    }
  }

  @FunctionalInterface
  private interface Stretch {
    void run(int thread, int lo, int hi);
  }

  /** Per-task copies of one bucket's members. */
  private static final class Scratch {
    int[] at = new int[64], own = new int[64], near = new int[64], start = new int[257];
    long[] codes = new long[64], tmp = new long[0];

    long[] tmp(int size) {
      if (tmp.length < size) tmp = new long[size];
      return tmp;
    }

    void fit(int b, int w, int o) {
      if (at.length < b) {
        at = new int[Math.max(b, at.length * 2)];
        near = new int[at.length];
      }
      if (codes.length < b * w) codes = new long[Math.max(b * w, codes.length * 2)];
      if (own.length < b * o) own = new int[Math.max(b * o, own.length * 2)];
    }
  }

  /** Task {@code task} of the scan: distinct codes {@code u} of the task against every {@code v > u}. */
  private void scan(int task, PairSink out, Emit emit) {
    int n = distinct.count(), w = distinct.codes().wordsPerCode();
    long[] data = distinct.codes().words();
    for (int u = task * TASK, end = Math.min(n, u + TASK); u < end; u++)
      for (int v = u + 1; v < n; v++) {
        int d = Hamming.distanceBounded(data, u * w, data, v * w, w, radius);
        if (d <= radius) emit(u, v, d, out, emit);
      }
  }

  /** The distinct pair {@code (u, v)}, {@code u < v}, as {@code ~u} (when wanted), then its ordinal pairs. */
  private void emit(int u, int v, int d, PairSink out, Emit emit) {
    if (emit.distinctPairs()) out.pair(~u, v, d);
    if (!emit.ordinals()) return;
    for (int x = 0, hu = distinct.holders(u), hv = distinct.holders(v); x < hu; x++) {
      int a = distinct.holder(u, x);
      for (int y = 0; y < hv; y++) {
        int c = distinct.holder(v, y);
        if (a < c) out.pair(a, c, d);
        else out.pair(c, a, d);
      }
    }
  }

  /**
   * {@code m} disjoint parts of the codes' bits, each one substring of a {@link BitPlan} or, when a
   * part needs more than 32 bits, a hash of several (equal parts give equal keys; a collision only
   * adds candidates, which are verified).
   */
  private record Parts(BitPlan plan, int count, int group) {
    static Parts choose(CodeBlock sample, int m, int informative) {
      int group = Math.max(1, (informative + m * SearchPlanOptions.MAX_SUBSTRING_BITS - 1) / (m * SearchPlanOptions.MAX_SUBSTRING_BITS));
      BitPlan plan = BitPlan.choose(sample, SearchPlanOptions.defaults().withSubstrings(m * group));
      if (plan.tables() != m * group) throw new IllegalStateException("bit plan has " + plan.tables() + " substrings, wanted " + m * group);
      return new Parts(plan, m, group);
    }

    /** Part keys of every code: {@code keys[i * count + p]}. */
    int[] keys(CodeBlock codes) {
      int n = codes.size(), w = codes.wordsPerCode();
      long[] data = codes.words();
      int[] keys = new int[Math.multiplyExact(n, count)];
      for (int i = 0; i < n; i++)
        for (int p = 0; p < count; p++) {
          if (group == 1) {
            keys[i * count + p] = plan.key(data, i * w, p);
            continue;
          }
          long h = SEED;
          for (int j = p * group; j < (p + 1) * group; j++) h = mix(h, plan.key(data, i * w, j));
          keys[i * count + p] = (int) (h ^ (h >>> 32));
        }
      return keys;
    }

    /** Pairs of {@code sample} codes sharing a bucket, summed over the tables of {@code s}-subsets. */
    long collisions(CodeBlock sample, int s) {
      int n = sample.size();
      int[] keys = keys(sample);
      long[] k = new long[n];
      long pairs = 0;
      for (int subset : subsets(count, s)) {
        for (int i = 0; i < n; i++) k[i] = keyHash(keys, i * count, count, subset);
        Arrays.sort(k);
        for (int i = 0; i < n; ) {
          int j = i + 1;
          while (j < n && k[j] == k[i]) j++;
          pairs += (long) (j - i) * (j - i - 1) / 2;
          i = j;
        }
      }
      return pairs;
    }
  }
}
