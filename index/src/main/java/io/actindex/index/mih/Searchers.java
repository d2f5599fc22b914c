package io.actindex.index.mih;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Forked;
import io.actindex.core.ScanSearcher;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.util.ArrayList;
import java.util.List;
import java.util.stream.IntStream;

/**
 * Builds, saves and loads the exact searcher of an immutable {@link CodeBlock}: multi-index hash
 * tables over entropy-balanced substrings of the non-constant bits, a lower-bound cascade for long
 * codes (tables over the most informative bits only) and a per-query planner that falls back to
 * the plain scan when the tables would not prune. Every path returns exactly what a brute-force
 * scan returns.
 *
 * <h2>Tables payload, version 3</h2>
 * Big-endian ({@link DataOutput}); the codes in id order are not part of it. Version 1 is the same
 * up to the tables, without the planner costs and the partition (read with the fixed default costs);
 * version 2 has no copy of the codes in cluster order (it is gathered from the codes on load).
 * <pre>
 * int    version (3)
 * int    n (codes), int bits, int layoutHash ({@code CodeLayout.hash()})
 * int    strategy id (0 AUTO, 1 TABLES, 2 SCAN)
 * long[words] constant-bit mask, long[words] constant-bit values
 * int    m (tables)
 * per table:
 *   int width (1..32), int[width] bit positions (strictly ascending)
 *   byte   kind: 0 dense (offsets by key), 1 sparse (sorted keys)
 *   sparse only: int distinct, int[distinct] keys XOR 0x80000000, strictly ascending
 *   int[buckets + 1] offsets (0, non-decreasing, n last; buckets = 2^width or distinct)
 *   int[n] ids (each ordinal once, grouped by key)
 * double[8] planner costs in ns, measured at build ({@link PlannerCosts}; on load a machine's
 *        {@link PlannerCalibration} takes their place: scan per code, scan per
 *        word, dense probe, sparse probe, candidate, walked filter member, partition code, candidate
 *        in a block far beyond the caches; version 2 has the first 7)
 * byte   partition: 0 none, 1 follows
 *   int clusters C (1..n), long[C * words] centres (ghost bits zero)
 *   int[C + 1] start (0, non-decreasing, n last)
 *   int[n] ordinals in cluster order (each once; inside a cluster by ascending distance to its centre)
 *   long[n * words] the codes in that order (version 3): loading is a sequential copy, not a gather
 * </pre>
 * {@link #read} checks every count against the codes with exact arithmetic, every ordinal, that
 * every code sits in the bucket of its own key and that the cluster-order copy equals the codes, and
 * recomputes every partition radius from the copy, so inconsistent tables cannot give wrong answers.
 * Without key verification (opening an index) the keys and the copy are taken as written: the
 * file's CRC (checked by {@code actindex check}) covers them.
 */
public final class Searchers {
  private Searchers() {}

  private static final int VERSION = 3, VERSION_START = 1;
  private static final SearchPlanOptions.Strategy[] STRATEGY_IDS = {
    SearchPlanOptions.Strategy.AUTO, SearchPlanOptions.Strategy.TABLES, SearchPlanOptions.Strategy.SCAN,
    SearchPlanOptions.Strategy.PARTITION
  };
  private static final int MAX_DENSE_WIDTH = 26;

  /** The searcher with the default plan ({@link SearchPlanOptions#defaults()}). */
  public static CodeSearcher build(CodeBlock codes) {
    return build(codes, SearchPlanOptions.defaults());
  }

  /**
   * The searcher under {@code opts}. With an automatic table count, the tables follow the analysis
   * of Norouzi, Punjani and Fleet (TPAMI 2014, choosing m): about {@code L / log2 n} substrings of
   * at most {@code log2 n} bits. When their keys carry much less entropy than {@code log2 n}
   * (correlated bits: large buckets), a layout with proportionally fewer, wider tables is built too,
   * and kept instead only when the tables' work for typical queries, counted and priced with fixed
   * costs ({@code typicalWork}), is under {@code WIDER_SHARE} of the first layout's: the choice
   * depends on the codes alone, not on the costs this build measured.
   */
  public static CodeSearcher build(CodeBlock codes, SearchPlanOptions opts) {
    return build(codes, opts, PlannerCosts.machine());
  }

  /** As {@link #build(CodeBlock, SearchPlanOptions)}, planning with {@code cost} (tests: fixed costs, choices independent of the machine). */
  static CodeSearcher build(CodeBlock codes, SearchPlanOptions opts, PlannerCosts cost) {
    // the partition and the tables do not depend on each other: the partition is built as a forked
    // task (run by the caller's fork-join pool, or the common pool) while this thread plans and
    // fills the tables, themselves one task per table
    Forked<Partition> partition = !opts.partition() || codes.size() < 2 ? null
        : Forked.start(() -> opts.strategy() == SearchPlanOptions.Strategy.PARTITION ? Partition.build(codes, 2, Partition.MIN_CLUSTER_SIZE)
            : Partition.build(codes));
    try {
      MihSearcher s = build(codes, BitPlan.choose(codes, opts), opts.strategy(), null, cost);
      int m = s.tables.length, n = codes.size();
      if (opts.substrings() == 0 && opts.balance() && m > 1 && n > 1) {
        double lg = Math.log(n) / Math.log(2), h = stats(s).tables().stream().mapToDouble(SearcherStats.Table::keyEntropy).average().orElse(lg);
        // fewer tables may not cover every bit (32 bits each at most): then they index the
        // highest-entropy bits and the rest is checked on the full codes (the cascade)
        int fewer = Math.max(1, (int) Math.round(m * h / lg));
        if (h < lg - 1 && fewer < m) {
          MihSearcher wider = build(codes, BitPlan.choose(codes, opts.withSubstrings(fewer)), opts.strategy(), null, cost);
          if (typicalWork(wider) < WIDER_SHARE * typicalWork(s)) s = wider;
        }
      }
      return partition == null ? s : s.withPartition(partition.join());
    } catch (RuntimeException | Error e) {
      if (partition != null) partition.quietlyJoin(); // no stray work left running after a failure
      throw e;
    }
  }

  /**
   * Share of the analysis' layout's typical work under which the fewer, wider tables are kept
   * instead. The wider tables trade verified candidates for probes of sparse tables, whose price
   * against a candidate's is 1.7x in the fixed costs and was 3.8x to 25x in costs measured on this
   * project's machine: on 1M ReLU codes of 256 bits the 7 tables of 32 bits counted 0.64 of the 14
   * narrow ones' work at the fixed prices, 3x at quiet measured ones (docs/benchmarks.md, "Table
   * layout chosen by counted work").
   */
  private static final double WIDER_SHARE = 0.5;

  /**
   * Mean work of the tables alone finding the 10 nearest other codes of 16 evenly spaced indexed
   * codes: buckets probed and candidates verified, counted on the codes and priced with the fixed
   * {@link PlannerCosts#defaults()}, each query's work cut at a scan's. Neither the costs the build
   * measured nor the load it ran under enter the choice.
   */
  private static double typicalWork(MihSearcher s) {
    CodeBlock codes = s.codes;
    PlannerCosts fixed = PlannerCosts.defaults();
    int n = codes.size(), samples = Math.min(16, n), k = Math.min(11, n);
    double cap = fixed.scan(n, codes.wordsPerCode()), total = 0;
    for (int i = 0; i < samples; i++) total += s.tablesWork(codes.code((int) ((long) i * n / samples)), k, fixed, cap);
    return total / samples;
  }

  private static MihSearcher build(CodeBlock codes, BitPlan plan, SearchPlanOptions.Strategy strategy, Partition partition,
      PlannerCosts cost) {
    int n = codes.size(), w = codes.wordsPerCode();
    long[] data = codes.words();
    SubstringTable[] tables = IntStream.range(0, plan.tables()).parallel().mapToObj(t -> {
      int[] keyOf = new int[n];
      for (int ord = 0; ord < n; ord++) keyOf[ord] = plan.key(data, ord * w, t);
      return SubstringTable.build(plan.width(t), keyOf);
    }).toArray(SubstringTable[]::new);
    return new MihSearcher(codes, plan, tables, strategy, partition, cost);
  }

  /**
   * Bit plan, table occupancy and memory of a searcher from {@link #build}; a plain scan has no
   * tables. The memory its partition builds on first use is counted at its most, built or not.
   */
  public static SearcherStats stats(CodeSearcher s) {
    if (s instanceof ScanSearcher scan)
      return new SearcherStats(scan.size(), scan.layout().bits(), 0, 0, List.of(), 0,
          8L * scan.size() * scan.layout().words(), 0);
    MihSearcher m = mih(s);
    List<SearcherStats.Table> tables = new ArrayList<>();
    long bytes = 0;
    for (SubstringTable t : m.tables) {
      tables.add(t.stats());
      bytes += t.bytes();
    }
    if (m.partition != null) bytes += m.partition.bytes();
    return new SearcherStats(m.size(), m.plan.bits(), m.plan.constantBits(), m.plan.indexedBits(), tables, bytes,
        8L * m.codes.words().length, m.partition == null ? 0 : m.partition.onDemandBytes());
  }

  /** Writes the tables payload of a searcher from {@link #build} (see the class comment). */
  public static void write(CodeSearcher s, DataOutput out) throws IOException {
    MihSearcher m = mih(s);
    BitPlan plan = m.plan;
    out.writeInt(VERSION);
    out.writeInt(m.size());
    out.writeInt(plan.bits());
    out.writeInt(m.layout().hash());
    out.writeInt(java.util.Arrays.asList(STRATEGY_IDS).indexOf(m.strategy));
    for (long x : plan.constMask()) out.writeLong(x);
    for (long x : plan.constValue()) out.writeLong(x);
    out.writeInt(plan.tables());
    for (int t = 0; t < plan.tables(); t++) {
      SubstringTable tab = m.tables[t];
      out.writeInt(plan.width(t));
      writeInts(out, plan.tableBits(t));
      out.writeByte(tab.dense() ? 0 : 1);
      if (!tab.dense()) {
        out.writeInt(tab.keys.length);
        writeInts(out, tab.keys);
      }
      writeInts(out, tab.offsets);
      writeInts(out, tab.ids);
    }
    for (double c : m.cost.toArray()) out.writeDouble(c);
    Partition p = m.partition;
    out.writeByte(p == null ? 0 : 1);
    if (p != null) {
      out.writeInt(p.clusters());
      for (long x : p.centres) out.writeLong(x);
      writeInts(out, p.start);
      writeInts(out, p.ords);
      writeLongs(out, p.codes);
    }
  }

  /**
   * Reads a tables payload written by {@link #write} for exactly these codes.
   *
   * @throws BadInputException if the payload does not fit the codes or is inconsistent in itself
   */
  public static CodeSearcher read(DataInput in, CodeBlock codes) throws IOException {
    return read(in, codes, true);
  }

  /**
   * As {@link #read(DataInput, CodeBlock)}; with {@code verifyKeys} false (opening an index whose
   * files passed their length and footer checks) it checks every count, offset and ordinal range
   * but does not recompute every code's key and constant bits: the full check is for {@code
   * actindex check} and merges.
   */
  public static CodeSearcher read(DataInput in, CodeBlock codes, boolean verifyKeys) throws IOException {
    int n = codes.size(), bits = codes.layout().bits(), w = codes.wordsPerCode();
    int version = in.readInt();
    if (version < VERSION_START || version > VERSION) throw bad("version " + version + " is not " + VERSION_START + ".." + VERSION);
    expect("code count", in.readInt(), n);
    expect("bits per code", in.readInt(), bits);
    expect("layout hash", in.readInt(), codes.layout().hash());
    int sid = in.readInt();
    if (sid < 0 || sid >= STRATEGY_IDS.length) throw bad("strategy id " + sid + " is unknown");
    long[] constMask = new long[w], constValue = new long[w];
    for (int i = 0; i < w; i++) constMask[i] = in.readLong();
    for (int i = 0; i < w; i++) constValue[i] = in.readLong();
    int m = in.readInt();
    if (m < 0 || m > bits) throw bad("table count " + m + " is outside 0.." + bits);
    int[][] tableBits = new int[m][];
    SubstringTable[] tables = new SubstringTable[m];
    for (int t = 0; t < m; t++) {
      int width = in.readInt();
      if (width < 1 || width > SearchPlanOptions.MAX_SUBSTRING_BITS)
        throw bad("table " + t + " width " + width + " is outside 1.." + SearchPlanOptions.MAX_SUBSTRING_BITS);
      tableBits[t] = readInts(in, width);
      int kind = in.readUnsignedByte();
      int[] keys = null;
      int buckets;
      if (kind == 0) {
        if (width > MAX_DENSE_WIDTH) throw bad("table " + t + " is dense with width " + width + " > " + MAX_DENSE_WIDTH);
        buckets = 1 << width;
      } else if (kind == 1) {
        buckets = in.readInt();
        if (buckets < 0 || buckets > n) throw bad("table " + t + " has " + buckets + " keys for " + n + " codes");
        keys = readInts(in, buckets);
        for (int b = 0; b < buckets; b++) {
          if (b > 0 && keys[b - 1] >= keys[b]) throw bad("table " + t + " keys not ascending at " + b);
          long key = (keys[b] ^ 0x80000000) & 0xffffffffL;
          if (width < 32 && key >>> width != 0) throw bad("table " + t + " key " + key + " is wider than " + width + " bits");
        }
      } else throw bad("table " + t + " kind " + kind + " is unknown");
      int[] offsets = readInts(in, Math.addExact(buckets, 1));
      if (offsets[0] != 0 || offsets[buckets] != n) throw bad("table " + t + " offsets do not run from 0 to " + n);
      for (int b = 0; b < buckets; b++)
        if (offsets[b] > offsets[b + 1] || (kind == 1 && offsets[b] == offsets[b + 1]))
          throw bad("table " + t + " offsets not " + (kind == 1 ? "strictly " : "") + "ascending at bucket " + b);
      int[] ids = readInts(in, n);
      tables[t] = new SubstringTable(width, keys, offsets, ids);
    }
    // the rest of the stream (version 2) before the checks against the codes
    PlannerCosts cost = PlannerCosts.defaults();
    Partition partition = null;
    if (version >= 2) {
      double[] c = new double[version >= 3 ? PlannerCosts.COUNT : PlannerCosts.COUNT_V2];
      for (int i = 0; i < c.length; i++) c[i] = in.readDouble();
      try {
        cost = PlannerCosts.of(c);
      } catch (IllegalArgumentException e) {
        throw bad(e.getMessage());
      }
      cost = PlannerCalibration.current().orElse(cost); // the machine's calibration, if any, over the builder's
      int kind = in.readUnsignedByte();
      if (kind == 1) partition = readPartition(in, codes, version >= 3, verifyKeys);
      else if (kind != 0) throw bad("partition kind " + kind + " is unknown");
    }
    BitPlan plan;
    try {
      plan = new BitPlan(bits, constMask, constValue, tableBits);
    } catch (IllegalArgumentException e) {
      throw bad(e.getMessage());
    }
    if (!verifyKeys) {
      for (int t = 0; t < m; t++)
        for (int ord : tables[t].ids)
          if (ord < 0 || ord >= n) throw bad("table " + t + " names ordinal " + ord + " outside 0.." + (n - 1));
      return new MihSearcher(codes, plan, tables, STRATEGY_IDS[sid], partition, cost);
    }
    if (!plan.constantsHold(codes)) throw bad("the codes do not carry the recorded constant bits");
    long[] data = codes.words();
    long[] seen = new long[(n + 63) >>> 6];
    for (int t = 0; t < m; t++) {
      SubstringTable tab = tables[t];
      java.util.Arrays.fill(seen, 0);
      for (int b = 0; b < tab.buckets(); b++) {
        int key = tab.keyOfBucket(b);
        for (int i = tab.offsets[b]; i < tab.offsets[b + 1]; i++) {
          int ord = tab.ids[i];
          if (ord < 0 || ord >= n) throw bad("table " + t + " names ordinal " + ord + " outside 0.." + (n - 1));
          if ((seen[ord >>> 6] >>> (ord & 63) & 1) != 0) throw bad("table " + t + " names ordinal " + ord + " twice");
          seen[ord >>> 6] |= 1L << (ord & 63);
          if (plan.key(data, ord * w, t) != key) throw bad("table " + t + " files ordinal " + ord + " under the wrong key");
        }
      }
    }
    return new MihSearcher(codes, plan, tables, STRATEGY_IDS[sid], partition, cost);
  }

  private static Partition readPartition(DataInput in, CodeBlock codes, boolean withCopy, boolean verifyCopy) throws IOException {
    int n = codes.size(), w = codes.wordsPerCode();
    int clusters = in.readInt();
    if (clusters < 1 || clusters > n) throw bad("partition has " + clusters + " clusters for " + n + " codes");
    long[] centres = new long[Math.multiplyExact(clusters, w)];
    for (int i = 0; i < centres.length; i++) centres[i] = in.readLong();
    long ghost = io.actindex.core.CodeBlock.ghostMask(codes.layout());
    for (int c = 0; c < clusters; c++)
      if ((centres[c * w + w - 1] & ghost) != 0) throw bad("partition centre " + c + " has bits past the code width");
    int[] start = readInts(in, clusters + 1);
    if (start[0] != 0 || start[clusters] != n) throw bad("partition starts do not run from 0 to " + n);
    for (int c = 0; c < clusters; c++) if (start[c] > start[c + 1]) throw bad("partition starts not ascending at cluster " + c);
    int[] ords = readInts(in, n);
    long[] seen = new long[(n + 63) >>> 6];
    for (int i = 0; i < n; i++) {
      int ord = ords[i];
      if (ord < 0 || ord >= n) throw bad("partition names ordinal " + ord + " outside 0.." + (n - 1));
      if ((seen[ord >>> 6] >>> (ord & 63) & 1) != 0) throw bad("partition names ordinal " + ord + " twice");
      seen[ord >>> 6] |= 1L << (ord & 63);
    }
    long[] copy = withCopy ? readLongs(in, Math.multiplyExact(n, w)) : null;
    if (copy != null) {
      long[] data = codes.words();
      for (int i = 0; i < n; i++) {
        if ((copy[i * w + w - 1] & ghost) != 0) throw bad("partition copy of ordinal " + ords[i] + " has bits past the code width");
        if (verifyCopy && !java.util.Arrays.equals(copy, i * w, i * w + w, data, ords[i] * w, ords[i] * w + w))
          throw bad("partition copy of ordinal " + ords[i] + " differs from the codes");
      }
    }
    try {
      return new Partition(codes, centres, start, ords, copy);
    } catch (IllegalArgumentException e) {
      throw bad("partition " + e.getMessage());
    }
  }

  private static MihSearcher mih(CodeSearcher s) {
    if (s instanceof MihSearcher m) return m;
    throw new IllegalArgumentException("not a searcher built by Searchers.build: " + s.getClass().getName());
  }

  private static void expect(String field, int got, int want) {
    if (got != want) throw bad(field + " is " + got + ", expected " + want);
  }

  private static BadInputException bad(String what) {
    return new BadInputException("search tables payload: " + what);
  }

  private static final int CHUNK = 1 << 14; // ints per buffered write/read

  private static void writeInts(DataOutput out, int[] a) throws IOException {
    ByteBuffer buf = ByteBuffer.allocate(4 * Math.min(CHUNK, Math.max(1, a.length)));
    for (int from = 0; from < a.length; from += CHUNK) {
      int len = Math.min(CHUNK, a.length - from);
      buf.clear();
      buf.asIntBuffer().put(a, from, len);
      out.write(buf.array(), 0, 4 * len);
    }
  }

  private static void writeLongs(DataOutput out, long[] a) throws IOException {
    ByteBuffer buf = ByteBuffer.allocate(8 * Math.min(CHUNK, Math.max(1, a.length)));
    for (int from = 0; from < a.length; from += CHUNK) {
      int len = Math.min(CHUNK, a.length - from);
      buf.clear();
      buf.asLongBuffer().put(a, from, len);
      out.write(buf.array(), 0, 8 * len);
    }
  }

  private static long[] readLongs(DataInput in, int count) throws IOException {
    long[] a = new long[count];
    byte[] bytes = new byte[8 * Math.min(CHUNK, Math.max(1, count))];
    ByteBuffer buf = ByteBuffer.wrap(bytes);
    for (int from = 0; from < count; from += CHUNK) {
      int len = Math.min(CHUNK, count - from);
      in.readFully(bytes, 0, 8 * len);
      buf.clear();
      buf.asLongBuffer().get(a, from, len);
    }
    return a;
  }

  private static int[] readInts(DataInput in, int count) throws IOException {
    int[] a = new int[count];
    byte[] bytes = new byte[4 * Math.min(CHUNK, Math.max(1, count))];
    ByteBuffer buf = ByteBuffer.wrap(bytes);
    for (int from = 0; from < count; from += CHUNK) {
      int len = Math.min(CHUNK, count - from);
      in.readFully(bytes, 0, 4 * len);
      buf.clear();
      buf.asIntBuffer().get(a, from, len);
    }
    return a;
  }
}
