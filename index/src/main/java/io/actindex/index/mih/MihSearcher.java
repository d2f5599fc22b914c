package io.actindex.index.mih;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hamming;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.core.ScanKernel;
import io.actindex.core.ScanSearcher;
import io.actindex.core.TopK;
import java.util.Arrays;
import java.util.function.IntPredicate;

/**
 * Exact search by multi-index hashing (Norouzi, Punjani and Fleet, "Fast Search in Hamming Space
 * with Multi-Index Hashing", CVPR 2012), with a per-query planner that falls back to the plain scan.
 *
 * <p>The tables key on disjoint substrings of the non-constant bits ({@link BitPlan}). For a query,
 * the lower bound {@code LB(code) = sum over tables of the substring distances + the constant-bit
 * distance} never exceeds the true distance (also when the tables cover only part of the bits: the
 * cascade). Probing table {@code j} at substring radius {@code rho} after tables {@code 0..j-1}
 * have been probed at {@code rho} and the rest at {@code rho-1} has visited every code with {@code
 * LB <= rho*m + j + constant} (pigeonhole), so kNN stops once the k-th best verified distance is
 * within that radius, and radius search probes exactly the shells that the radius needs. Every
 * candidate is verified on the full code. With a mask, only tables whose bits all lie inside the
 * mask take part (their distances still bound the masked distance from below).
 *
 * <p>Thread-safe: per-thread scratch (a visited bitset) is kept in a {@link ThreadLocal}.
 */
final class MihSearcher implements CodeSearcher {
  /** Which path answered ({@link #lastQueryWork}): the scan's head (a masked query, before any other set-up) is the scan's answer too. */
  static final int PATH_SCAN = 1, PATH_TABLES = 2, PATH_PARTITION = 3, PATH_HEAD = 4;
  /** Work the tables may spend on a query without knowing it will finish cheaper than a scan. */
  private static final double EAGER = 0.07;
  /** Work the tables may spend in all once an upper bound shows they finish within it. */
  private static final double PROVEN = 0.9;
  /** How much cheaper the tables must be estimated than a block's windows to take the block out of a joint walk. */
  private static final double JOINT_TABLES_MARGIN = 16;
  /**
   * Work the tables may spend (the first round included) before an upper bound of what is left
   * shows they finish within {@link #PROVEN}: a query that falls back to the scan unproven costs at
   * most this much more than the scan.
   */
  private static final double UNPROVEN = 0.1;
  /**
   * Under a mask, the partition's estimated work must fit under this share of a scan: its radius
   * tests and the codes tied at the k-th distance cost about twice what it estimates on 1M skewed
   * ReLU-like codes, and 2.5-3 times on 100k dense ones (64-256 bits, one layer, measured per query
   * against the masked scan), so the estimate needs the margin.
   */
  private static final double MASKED_PROVEN = 0.3;
  /**
   * After the masked scan's head, the partition is not tried when its estimate under a guess of the
   * final k-th distance exceeds this multiple of what it must fit under ({@link #partitionHopeless}).
   * First 2, chosen from a log of about 9,800 masked queries per seed (100k codes, dense and
   * skewed, 64-512 bits, either layer, in and out of distribution, k = 1, 10 and 100; docs/benchmarks.md,
   * "Stop 25"). Since masked windows may be read in one pass ({@link Partition#estimate}) the
   * estimates are lower and tighter, and the queries in the band between 1 and 2 times the limit
   * were all tried in vain: 1.25 brought every k = 100 set at 64-256 bits, on the tuned and the
   * held-out seed, within 1.04x of the masked scan (2: up to 1.13x) while the partition answered
   * 0-8 fewer queries per set of 256 ("Stop 26").
   */
  private static final double HOPELESS = 1.25;

  /**
   * Share of a selective filter's walk that the partition's first clusters may cost, and share of
   * it under which the partition's estimate must stay to finish the query (see {@link #selective}):
   * the estimate is optimistic (1M 256-bit codes, 1% filter: estimated at most half the walk, the
   * partition took 1.4x the walk's 139 us on dense codes, about 2x its 150 us on skewed ones), so
   * the partition must promise a quarter. A 10% filter, whose walk took 3-5 ms, is far under it.
   */
  private static final double SELECTIVE_TRY = 0.1, SELECTIVE_MARGIN = 0.25;
  private static final int[] NO_TABLES = {};

  /** The masked scan's head ({@link #head}): the first n / HEAD_SHARE codes, at least HEAD_MIN... */
  static final int HEAD_SHARE = 64, HEAD_MIN = 1024;
  /** ...then on while k codes at distance 0 are expected within this share of the codes. */
  private static final double HEAD_REACH = 0.125;

  final CodeBlock codes;
  final BitPlan plan;
  final SubstringTable[] tables;
  final SearchPlanOptions.Strategy strategy;
  final Partition partition; // null: none (small block)
  final PlannerCosts cost;
  private final ScanSearcher scan;
  private final long ghost; // the layout's bits past its width in a code's last word
  private final double scanCost;
  private final double[] freshCost; // see freshTablesCost
  private final double candidateCost; // a candidate verified at a random place of these codes
  private final double[] ownRate; // expected codes in the query's own bucket, per table
  private final double[] nearRate; // expected codes per probe of a neighbouring bucket, per table
  private final ThreadLocal<Scratch> scratch;

  MihSearcher(CodeBlock codes, BitPlan plan, SubstringTable[] tables, SearchPlanOptions.Strategy strategy,
      Partition partition, PlannerCosts cost) {
    this.codes = codes;
    this.plan = plan;
    this.tables = tables;
    this.strategy = strategy;
    this.partition = partition;
    this.cost = cost;
    this.scan = new ScanSearcher(codes);
    this.ghost = CodeBlock.ghostMask(codes.layout());
    int n = codes.size();
    this.scanCost = cost.scan(n, codes.wordsPerCode());
    this.candidateCost = cost.candidate(8L * codes.words().length);
    this.ownRate = new double[tables.length];
    this.nearRate = new double[tables.length];
    for (int t = 0; t < tables.length; t++) {
      ownRate[t] = Math.max(1.0, tables[t].stats().meanCollisions());
      nearRate[t] = Math.max(0.05, neighbourOccupancy(t));
    }
    this.scratch = ThreadLocal.withInitial(() -> new Scratch(n, tables.length));
    this.freshCost = freshCosts();
  }

  /** This searcher with {@code p} as its partition (the tables' statistics are reused). */
  MihSearcher withPartition(Partition p) {
    return new MihSearcher(this, p);
  }

  private MihSearcher(MihSearcher s, Partition partition) {
    this.codes = s.codes;
    this.plan = s.plan;
    this.tables = s.tables;
    this.strategy = s.strategy;
    this.partition = partition;
    this.cost = s.cost;
    this.scan = s.scan;
    this.ghost = s.ghost;
    this.scanCost = s.scanCost;
    this.candidateCost = s.candidateCost;
    this.ownRate = s.ownRate;
    this.nearRate = s.nearRate;
    this.freshCost = s.freshCost;
    int n = codes.size();
    this.scratch = ThreadLocal.withInitial(() -> new Scratch(n, tables.length));
  }

  @Override
  public CodeLayout layout() {
    return codes.layout();
  }

  @Override
  public int size() {
    return codes.size();
  }

  @Override
  public Hits knn(long[] query, int k, IntPredicate accept, long[] mask) {
    return knn(query, k, accept, mask, Integer.MAX_VALUE);
  }

  /**
   * The planner's order: an empty filter answers at once and a selective one is walked (the scan
   * does both); under a mask the scan's head runs first ({@link #head}) and answers when it holds k
   * codes at distance 0 (or, when only codes at 0 can still enter, after reading on as far as the
   * partition's try would); then the partition finds a first k-th distance B from the nearest clusters
   * (under a mask, with the mask's distances to the centres and radii, starting from a copy of a
   * full head's top), and whichever of the rest of the partition, the tables (every shell up to B)
   * or the scan (from where the head stopped) is estimated cheapest finishes the query, with B as
   * the distance cap. A masked scan costs what its selected words cost.
   */
  @Override
  public Hits knn(long[] query, int k, IntPredicate accept, long[] mask, int maxDist) {
    int w = codes.wordsPerCode();
    query = ScanSearcher.checkQuery(w, ghost, query, mask);
    mask = ScanSearcher.checkMask(w, ghost, mask);
    int n = codes.size();
    if (k <= 0 || n == 0 || maxDist < 0) return Hits.EMPTY;
    boolean auto = strategy == SearchPlanOptions.Strategy.AUTO;
    ScanKernel.Words sel = mask == null ? null : ScanKernel.Words.of(query, mask, w);
    double scanCost = mask == null ? this.scanCost : cost.scan(n, sel.at().length);
    if (accept instanceof IdSet set) {
      if (set.size() != n) throw new IllegalArgumentException("filter over " + set.size() + " ordinals, searcher has " + n);
      if (set.isEmpty()) return Hits.EMPTY;
      double walkCost = set.count() * cost.walk();
      if (auto && walkCost <= scanCost) {
        Hits h = mask == null ? selective(query, Math.min(k, n), set, maxDist, walkCost) : null;
        if (h != null) return h;
        scratch.get().answeredBy(PATH_SCAN); // the scan walks the filter's members
        return scan.knn(query, k, accept, mask, maxDist);
      }
    }
    int kk = Math.min(k, n);
    // under a mask, the scan's first codes: done when k of them tie at distance 0 (see head)
    Head head = null;
    if (mask != null && auto && !(accept instanceof IdSet set && set.count() <= ScanSearcher.WALK_SHARE * n)) {
      head = head(sel, kk, accept, maxDist);
      // k codes at distance 0 expected before the end: any other path would have to find every code
      // at distance 0, the scan stops after k of them
      if (!head.done() && head.stop < n) head.scanTo(n, sel, accept, maxDist);
      if (head.done()) {
        scratch.get().answeredBy(PATH_HEAD);
        return head.top.toHits();
      }
      if (head.top.size() == kk) maxDist = Math.min(maxDist, head.top.bound()); // k codes are within it
      scanCost *= (double) (head.stop - head.end) / n; // what the scan has left
    }
    int[] active = activeTables(mask);
    Scratch s = scratch.get().begin(this, query, active);
    s.scanCost = scanCost;
    try {
      boolean usePartition = partition != null && (auto || strategy == SearchPlanOptions.Strategy.PARTITION);
      if (usePartition && head != null && head.top.size() == kk) {
        partition.begin(sel, mask, codes.layout().bits(), s.visit, accept, head.top, 0, maxDist); // the clusters in order, none scanned
        if (head.top.bound() == 1) {
          // only codes at distance 0 can still enter: the scan stops at the k-th of them, while the
          // partition would have to find them all (ties go to the smallest positions); so the head
          // first reads as many codes as the partition's try would (its nearest clusters), and a
          // query with k codes at 0 there ends at no more than the try's cost (ski rental)
          head.scanTo((int) Math.min(n, head.end + partition.nearestCodes(s.visit, kk)), sel, accept, maxDist);
          if (head.done()) {
            s.path = PATH_HEAD;
            return head.top.toHits();
          }
          s.scanCost = scanCost = cost.scan((int) Math.max(0, head.stop - head.end), sel.at().length);
        }
        usePartition = !(s.untried = partitionHopeless(s.visit, head, kk, scanCost) || partitionCannotPay(s.visit, kk, scanCost));
      }
      if (usePartition) {
        TopK top;
        IntPredicate rest = accept; // what the partition may offer
        int from;
        if (head != null && head.top.size() == kk) {
          // the partition starts from the head's k codes and skips the head's positions (ordinals)
          top = head.top.copy();
          int end = head.end;
          IntPredicate a = accept;
          rest = a == null ? o -> o >= end : o -> o >= end && a.test(o);
          from = partition.scanNearest(s.visit, rest, top, maxDist, kk);
        } else {
          top = new TopK(kk);
          from = partition.begin(sel != null ? sel : ScanKernel.Words.of(query, null, codes.wordsPerCode()), mask,
              codes.layout().bits(), s.visit, accept, top, kk, maxDist);
        }
        int bound = top.size() == kk ? Math.min(maxDist, top.bound()) : maxDist;
        if (head != null && bound == 0 && from < partition.clusters()) {
          // k codes at distance 0 near the query: there may be thousands, which the partition must
          // all find while the scan stops after k of them; the scan goes on to n/8 first
          head.scanTo(Math.max(head.end, (int) (HEAD_REACH * n)), sel, accept, maxDist);
          if (head.done()) {
            s.path = PATH_SCAN;
            return head.top.toHits();
          }
          // the scan stops by the largest ordinal among the partition's k codes at distance 0
          long last = top.size() == kk ? Math.min(n, (int) top.worst() + 1L) : n;
          scanCost = cost.scan((int) Math.max(0, last - head.end), sel.at().length);
        }
        double limit = (mask == null ? PROVEN : MASKED_PROVEN) * scanCost;
        double restCost = from == partition.clusters() ? 0
            : partition.estimate(s.visit, from, bound, cost, auto ? limit : Double.POSITIVE_INFINITY);
        double tablesCost = tablesCost(s, active, bound, plan.constantDistance(query, mask));
        if (!auto || restCost <= limit && restCost <= tablesCost) {
          s.path = PATH_PARTITION;
          if (restCost > 0) partition.finish(s.visit, from, rest, top, maxDist);
          return top.toHits();
        }
        maxDist = bound; // the k-th distance so far bounds the answer: the path below starts afresh under it
        if (tablesCost > scanCost) active = new int[0]; // the rest of the scan is cheaper
      }
      if (head != null && active.length == 0) { // the scan goes on after its head
        s.path = PATH_SCAN;
        ScanKernel.knn(sel, codes.words(), codes.wordsPerCode(), head.end, n, null, accept, head.top, maxDist);
        return head.top.toHits();
      }
      if (strategy == SearchPlanOptions.Strategy.SCAN || strategy == SearchPlanOptions.Strategy.PARTITION || active.length == 0) {
        s.path = PATH_SCAN;
        return scan.knn(query, k, accept, mask, maxDist);
      }
      return tables(s, query, kk, accept, mask, active, maxDist, head, sel);
    } finally {
      s.end();
    }
  }

  /**
   * A selective filter ({@code set}, cheaper to walk than to scan past), unmasked: its walk costs
   * {@code walkCost}, but with many members the partition may find the k nearest of them sooner
   * (a 5% filter's 10th nearest member is about the 200th nearest code, which the windows reach
   * quickly; a 0.01% filter's lies too far for any pruning). So when the clusters nearest the query
   * are expected to hold k members within {@value #SELECTIVE_TRY} of the walk's cost (k n / count
   * codes), they are scanned first; the k-th distance they give bounds the windows of the rest, and
   * the partition finishes the query if those windows are estimated at most {@value #SELECTIVE_MARGIN}
   * of the walk. Else the walk answers, under that k-th distance (null: the caller walks).
   */
  private Hits selective(long[] query, int k, IdSet set, int maxDist, double walkCost) {
    if (partition == null || (double) k * codes.size() / set.count() * cost.partitionCode() > SELECTIVE_TRY * walkCost) return null;
    Scratch s = scratch.get().begin(this, query, NO_TABLES);
    try {
      TopK top = new TopK(k);
      ScanKernel.Words sel = ScanKernel.Words.of(query, null, codes.wordsPerCode());
      int from = partition.begin(sel, null, codes.layout().bits(), s.visit, set, top, k, maxDist);
      int bound = top.size() == k ? Math.min(maxDist, top.bound()) : maxDist;
      double limit = SELECTIVE_MARGIN * walkCost;
      double rest = from == partition.clusters() ? 0
          : partition.estimate(s.visit, from, bound, cost, limit);
      if (rest > limit) { // the walk, skipping members the centres' distances rule out
        s.path = PATH_SCAN;
        TopK walked = new TopK(k); // the k members found are within the bound, and are walked again
        partition.walk(sel, codes.words(), set, s.visit, walked, bound);
        return walked.toHits();
      }
      s.path = PATH_PARTITION;
      if (rest > 0) partition.finish(s.visit, from, set, top, maxDist);
      return top.toHits();
    } finally {
      s.end();
    }
  }

  /**
   * The plain scan's first codes under a mask: {@code top} after positions {@code [0, end)}, and
   * {@code stop}, where the whole scan is expected to end (n, or earlier when it is expected to find
   * k codes at distance 0 before).
   */
  private final class Head {
    final TopK top;
    final int k;
    int end;
    long stop;

    Head(int k) {
      this.k = k;
      top = new TopK(k);
      stop = codes.size();
    }

    /** Scans on to position {@code to}. */
    void scanTo(int to, ScanKernel.Words sel, IntPredicate accept, int maxDist) {
      ScanKernel.knn(sel, codes.words(), codes.wordsPerCode(), end, to, null, accept, top, maxDist);
      end = Math.max(end, to);
    }

    /** Whether the top is the scan's answer: every code seen, or k codes at distance 0. */
    boolean done() {
      return end == codes.size() || top.size() == k && top.bound() == 0;
    }
  }

  /**
   * The plain scan's first codes under a mask: a masked distance (one layer of skewed codes) is
   * often 0 for thousands of codes, and the scan, which stops once it holds k codes at distance 0
   * (the smallest ordinals, as ties go), then ends within a few hundred codes, long before another
   * path could even find all those ties. Scans the first {@code n / }{@value #HEAD_SHARE} codes (at
   * least {@value #HEAD_MIN}), then further while the codes at distance 0 so far predict k of them
   * within {@value #HEAD_REACH} of the codes. The answer is in the head's top when it is {@link
   * Head#done}.
   */
  private Head head(ScanKernel.Words sel, int kk, IntPredicate accept, int maxDist) {
    int n = codes.size();
    Head head = new Head(kk);
    head.scanTo(Math.min(n, Math.max(HEAD_MIN, n / HEAD_SHARE)), sel, accept, maxDist);
    while (!head.done()) {
      int zeros = head.top.countWithin(0);
      head.stop = zeros == 0 ? n : Math.max(head.end, Math.min(n, (long) head.end * kk / zeros)); // expected end of the scan
      long next = head.stop * 5 / 4; // with a margin
      if (next > HEAD_REACH * n) break;
      head.scanTo((int) Math.min(n, Math.max(next, 2L * head.end)), sel, accept, maxDist);
    }
    return head;
  }

  /**
   * Whether the partition, tried after the masked scan's head (whose top holds k codes, the
   * clusters of {@code v} in order), is not worth its try: the try scans the nearest clusters whole
   * to learn a k-th distance to estimate with, about 15% of a masked scan over 100k codes, and out
   * of distribution it ends in the scan for most queries. The guess: the head's first {@code
   * head.end} codes are a sample of the codes in id order, so about {@code k * head.end / n} of them
   * lie within the final k-th distance, and the distance of the head's j-th nearest, j that count
   * rounded up, stands for it (the scaling of k-NN distances with sample size: common practice).
   * Used only when that count is at least 1 (k of 64 or more with a head of n / 64); below, the guess
   * would lie beyond the head's nearest code and the rule lost many queries the partition wins.
   */
  private boolean partitionHopeless(Partition.Visit v, Head head, int k, double scanCost) {
    double expected = (double) k * head.end / codes.size();
    if (expected < 1) return false;
    int j = (int) Math.ceil(expected), guess = 0;
    while (head.top.countWithin(guess) < j) guess++;
    double limit = HOPELESS * MASKED_PROVEN * scanCost;
    return partition.estimate(v, 0, guess, cost, limit) > limit;
  }

  /**
   * Whether the partition, tried after the masked scan's head, could not finish the query even if
   * its try (the nearest clusters) found k codes at distance 0: its estimate for the clusters after
   * the try is least at a k-th distance of 0 (every window only shrinks as the bound drops), and the
   * scan it would have to beat only gets shorter after the try. Where that least estimate is over
   * the limit the try is wasted whatever it finds (skewed codes under one layer out of distribution,
   * codes without structure); the head's guess ({@link #partitionHopeless}) needs k of 64 or more,
   * this needs none.
   */
  private boolean partitionCannotPay(Partition.Visit v, int k, double scanCost) {
    double limit = MASKED_PROVEN * scanCost;
    return partition.estimate(v, partition.nearestClusters(v, k), 0, cost, limit) > limit;
  }

  /**
   * Multi-index hashing over the active tables, falling back to the scan when the planner says so
   * (after the scan's head, if any: from where it stopped).
   */
  private Hits tables(Scratch s, long[] query, int kk, IntPredicate accept, long[] mask, int[] active, int maxDist, Head head,
      ScanKernel.Words sel) {
    int m = active.length, c = plan.constantDistance(query, mask);
    TopK top = new TopK(kk);
    s.path = PATH_TABLES;
    int maxWidth = 0;
    for (int t : active) maxWidth = Math.max(maxWidth, tables[t].width);
    for (int rho = 0; rho <= maxWidth; rho++) {
      for (int j = 0; j < m; j++) {
        int t = active[j];
        if (rho <= tables[t].width) {
          if (strategy == SearchPlanOptions.Strategy.AUTO && !worthIt(s, top, kk, active, rho, j, c, maxDist)) {
            s.path = PATH_SCAN;
            if (head == null) return scan.knn(query, kk, accept, mask, bound(top, kk, maxDist));
            head.scanTo(codes.size(), sel, accept, bound(top, kk, maxDist));
            return head.top.toHits();
          }
          shell(s, t, rho, query, accept, mask, top, bound(top, kk, maxDist));
        }
        if (bound(top, kk, maxDist) <= rho * m + j + c) return top.toHits();
      }
    }
    return top.toHits();
  }

  /** The largest distance that can still enter: the k-th so far (once there are k), capped by maxDist. */
  private static int bound(TopK top, int k, int maxDist) {
    return top.size() == k ? Math.min(maxDist, top.bound()) : maxDist;
  }

  /**
   * Estimated cost of the tables finding every code within {@code bound} of {@code query} (bucket
   * statistics measured at build; see {@link #partitionFinishes}).
   */
  double tablesCost(long[] query, int bound) {
    return freshTablesCost(bound, plan.constantDistance(query, null));
  }

  /**
   * Work of the tables alone finding the {@code k} nearest codes of {@code query}: every shell in
   * order, no planner and no scan, priced with {@code c} from the buckets probed and candidates
   * verified (counted, not timed), and cut at {@code cap} (returned once reached). For comparing
   * table layouts of the same codes at build.
   */
  double tablesWork(long[] query, int k, PlannerCosts c, double cap) {
    int kk = Math.min(k, codes.size()), m = tables.length, from = plan.constantDistance(query, null);
    double candidate = c.candidate(8L * codes.words().length), work = 0;
    TopK top = new TopK(kk);
    Scratch s = scratch.get().begin(this, query, activeTables(null));
    try {
      for (int rho = 0; rho <= SearchPlanOptions.MAX_SUBSTRING_BITS; rho++)
        for (int t = 0; t < m; t++) {
          if (rho <= tables[t].width) {
            long probes = s.probes, candidates = s.candidates;
            shell(s, t, rho, query, null, null, top, bound(top, kk, Integer.MAX_VALUE));
            work += (s.probes - probes) * (tables[t].dense() ? c.probeDense() : c.probeSparse()) + (s.candidates - candidates) * candidate;
            if (work >= cap) return cap;
          }
          if (bound(top, kk, Integer.MAX_VALUE) <= rho * m + t + from) return work;
        }
      return work;
    } finally {
      s.end();
    }
  }

  /**
   * For {@link JointSearch}: whether this block's partition should finish an unmasked query whose
   * windows hold {@code restCodes} codes under the k-th distance {@code bound}: at most most of a
   * scan (the rule of {@link #knn}), and no more than {@value #JOINT_TABLES_MARGIN} times what the
   * tables are estimated to cost to reach the bound (always with strategy PARTITION). The margin:
   * on ten segments of 100k skewed ReLU codes (docs/benchmarks.md, "Ten segments: larger clusters
   * for small segments") the estimate put the tables below the windows for 10-27% of the blocks,
   * and each block so sent to its tables took 300-500 µs instead of the about 20 µs its windows
   * take in the joint walk. A near-duplicate query, whose tables are estimated at a few probes, can
   * still leave the walk (not measured).
   */
  boolean partitionFinishes(long restCodes, long[] query, int bound) {
    if (strategy != SearchPlanOptions.Strategy.AUTO) return strategy == SearchPlanOptions.Strategy.PARTITION;
    double rest = restCodes * cost.partitionCode();
    return rest <= PROVEN * scanCost && rest <= JOINT_TABLES_MARGIN * tablesCost(query, bound);
  }

  /**
   * {@link #tablesCost(Scratch, int[], int, int)} of an unmasked query before any probe (so with the
   * rates measured at build), every table active: it depends only on {@code bound - c}, the
   * constant-bit distance c, so it is tabulated once per searcher.
   */
  private double freshTablesCost(int bound, int c) {
    if (bound < c) return 0; // no shell: every code is at least c away
    return freshCost[(int) Math.min(freshCost.length - 1, (long) bound - c + 1)];
  }

  /** The table behind {@link #freshTablesCost}: entry L + 1 sums the shells of levels {@code x*m + j <= L}. */
  private double[] freshCosts() {
    int m = tables.length, maxWidth = 0;
    for (SubstringTable t : tables) maxWidth = Math.max(maxWidth, t.width);
    double[] f = new double[(maxWidth + 1) * m + 2];
    if (m == 0 || strategy == SearchPlanOptions.Strategy.PARTITION) {
      Arrays.fill(f, Double.POSITIVE_INFINITY);
      return f;
    }
    double total = 0;
    for (int level = 0; level + 1 < f.length; level++) {
      int x = level / m, j = level % m; // shell (x, j) counts when x*m + j - 1 + c < bound
      if (total <= scanCost && x <= tables[j].width)
        total += (double) Math.min(ProbeEnumerator.count(tables[j].width, x), tables[j].buckets())
            * ((tables[j].dense() ? cost.probeDense() : cost.probeSparse()) + (x == 0 ? ownRate[j] : nearRate[j]) * candidateCost);
      f[level + 1] = total;
    }
    return f;
  }


  /** Estimated cost of probing every shell the tables would need to find all codes within {@code bound}. */
  private double tablesCost(Scratch s, int[] active, int bound, int c) {
    int m = active.length;
    if (m == 0 || strategy == SearchPlanOptions.Strategy.PARTITION) return Double.POSITIVE_INFINITY;
    int maxWidth = 0;
    for (int t : active) maxWidth = Math.max(maxWidth, tables[t].width);
    double total = 0;
    for (int x = 0, j = 0; x <= maxWidth && (long) x * m + j - 1 + c < bound; ) {
      int t = active[j];
      if (x <= tables[t].width) total += shellCost(s, t, x);
      if (total > s.scanCost) return total;
      if (++j == m) {
        j = 0;
        x++;
      }
    }
    return total;
  }

  @Override
  public Hits radius(long[] query, int radius, IntPredicate accept, long[] mask) {
    query = ScanSearcher.checkQuery(codes.wordsPerCode(), ghost, query, mask);
    mask = ScanSearcher.checkMask(codes.wordsPerCode(), ghost, mask);
    if (radius < 0 || codes.size() == 0) return Hits.EMPTY;
    int[] active = activeTables(mask);
    if (accept instanceof IdSet set && set.isEmpty()) return Hits.EMPTY;
    if (strategy == SearchPlanOptions.Strategy.SCAN || strategy == SearchPlanOptions.Strategy.PARTITION || active.length == 0)
      return scan.radius(query, radius, accept, mask);
    int c = plan.constantDistance(query, mask);
    int rr = radius - c, m = active.length;
    if (rr < 0) return Hits.EMPTY; // every code is at least c away
    Scratch s = scratch.get().begin(this, query, active);
    try {
      // table j is probed up to substring radius rho_j = rr/m for j <= rr%m, rr/m - 1 after
      if (strategy == SearchPlanOptions.Strategy.AUTO) {
        double est = 0;
        for (int j = 0; j < m; j++)
          for (int x = 0; x <= Math.min(tables[active[j]].width, rr / m - (j <= rr % m ? 0 : 1)); x++)
            est += shellCost(s, active[j], x);
        if (est > PROVEN * scanCost) {
          s.path = PATH_SCAN;
          return scan.radius(query, radius, accept, mask);
        }
      }
      for (int j = 0; j < m; j++) {
        int t = active[j];
        int limit = Math.min(tables[t].width, rr / m - (j <= rr % m ? 0 : 1));
        for (int x = 0; x <= limit; x++) shell(s, t, x, query, accept, mask, null, radius);
      }
      return Hits.sorted(s.hitOrds, s.hitDists, s.hits);
    } finally {
      s.end();
    }
  }

  /**
   * Planner: may the tables probe shell (rho, j) next? Yes while the work so far plus that shell stays
   * under a small share of a scan ({@link #EAGER} until k candidates are known, then {@link
   * #UNPROVEN}); beyond that, yes while an upper bound of the work still needed (every shell up to
   * the current k-th best distance) fits under most of a scan. Otherwise the caller scans.
   */
  private boolean worthIt(Scratch s, TopK top, int k, int[] active, int rho, int j, int c, int maxDist) {
    double scanCost = s.scanCost, next = s.work + shellCost(s, active[j], rho);
    int m = active.length, bound = bound(top, k, maxDist);
    if (next <= (bound == Integer.MAX_VALUE && rho > 0 ? EAGER : UNPROVEN) * scanCost) return true;
    if (bound == Integer.MAX_VALUE) return false;
    double remaining = 0;
    for (int x = rho, jj = j; x * m + jj - 1 + c < bound; ) {
      int t = active[jj];
      if (x <= tables[t].width) remaining += shellCost(s, t, x);
      if (s.work + remaining > PROVEN * scanCost) return false;
      if (++jj == m) {
        jj = 0;
        x++;
      }
    }
    return true;
  }

  /** Estimated cost of probing table t at exactly substring radius rho. */
  private double shellCost(Scratch s, int t, int rho) {
    SubstringTable tab = tables[t];
    double probes = Math.min(ProbeEnumerator.count(tab.width, rho), tab.buckets());
    // codes per probe: the table's prior, corrected by what this query met in neighbouring buckets
    double rate = rho == 0 ? ownRate[t] : (nearRate[t] * 64 + s.nearCandidates) / (64 + s.nearProbes);
    return probes * ((tab.dense() ? cost.probeDense() : cost.probeSparse()) + rate * candidateCost);
  }

  /** Mean size of the buckets one bit away from the keys of up to 256 evenly spaced codes. */
  private double neighbourOccupancy(int t) {
    SubstringTable tab = tables[t];
    int n = codes.size(), samples = Math.min(n, 256), w = codes.wordsPerCode();
    if (samples == 0) return 0;
    long sum = 0;
    for (int i = 0; i < samples; i++) {
      int key = plan.key(codes.words(), (int) ((long) i * n / samples) * w, t);
      for (int f = 0; f < tab.width; f++) {
        int b = tab.bucket(key ^ (1 << f));
        if (b >= 0) sum += tab.offsets[b + 1] - tab.offsets[b];
      }
    }
    return sum / ((double) samples * tab.width);
  }

  /**
   * Visits every code whose key in table t is at distance exactly rho from the query's key.
   * kNN mode when top is non-null (codes within {@code radius} may enter it), else radius mode
   * (hits with distance <= radius collected). The filter is asked only about codes within the bound.
   */
  private void shell(Scratch s, int t, int rho, long[] q, IntPredicate accept, long[] mask, TopK top, int radius) {
    SubstringTable tab = tables[t];
    int qkey = s.keys[t];
    int[] offsets = tab.offsets, ids = tab.ids;
    long[] data = codes.words(), visited = s.visited;
    int w = codes.wordsPerCode();
    long probes = 0, cands = 0;
    double flips = ProbeEnumerator.count(tab.width, rho);
    boolean byBucket = flips > tab.buckets(); // cheaper to walk the buckets than to enumerate keys
    long limit = ProbeEnumerator.limit(tab.width);
    long f = ProbeEnumerator.first(rho);
    int b = -1;
    while (true) {
      if (byBucket) {
        if (++b >= tab.buckets()) break;
        if (Integer.bitCount(tab.keyOfBucket(b) ^ qkey) != rho || offsets[b] == offsets[b + 1]) continue;
      } else {
        if (f >= limit) break;
        b = tab.bucket(qkey ^ (int) f);
        f = ProbeEnumerator.next(f);
        probes++;
        if (b < 0) continue;
      }
      for (int i = offsets[b], end = offsets[b + 1]; i < end; i++) {
        int ord = ids[i];
        long bit = 1L << ord;
        int word = ord >>> 6;
        if ((visited[word] & bit) != 0) continue;
        visited[word] |= bit;
        s.touch(ord);
        cands++;
        int bound = top != null ? Math.min(radius, top.bound()) : radius;
        int d = mask == null
            ? Hamming.distanceBounded(q, 0, data, ord * w, w, bound)
            : Hamming.maskedDistance(q, 0, data, ord * w, mask, w);
        if (d > bound || accept != null && !accept.test(ord)) continue;
        if (top != null) top.offer(ord, d);
        else s.hit(ord, d);
      }
    }
    if (byBucket) probes = tab.buckets();
    s.probes += probes;
    s.candidates += cands;
    if (rho > 0) {
      s.nearProbes += probes;
      s.nearCandidates += cands;
    }
    s.work += probes * (tab.dense() ? cost.probeDense() : cost.probeSparse()) + cands * candidateCost;
  }

  /**
   * Expert, for tests and tuning: {probes, candidates, 1 if the query ended in the scan, the path
   * that answered (PATH_*)} of the last query this thread ran on this searcher.
   */
  long[] lastQueryWork() {
    Scratch s = scratch.get();
    return new long[] {s.probes, s.candidates, s.path == PATH_SCAN || s.path == PATH_HEAD ? 1 : 0, s.path};
  }

  /** Expert, for tests: whether this thread's last query left the partition untried after the masked head ({@link #partitionHopeless}, {@link #partitionCannotPay}). */
  boolean lastLeftPartitionUntried() {
    return scratch.get().untried;
  }

  /** Expert, for tests: the table work of this thread's last query as a share of its scan, both in the planner's costs. */
  double lastTableWorkShare() {
    Scratch s = scratch.get();
    return s.work / s.scanCost;
  }

  /** Tables usable under the mask: all (null mask) or those whose bits the mask covers. */
  private int[] activeTables(long[] mask) {
    int[] all = new int[tables.length];
    int m = 0;
    for (int t = 0; t < tables.length; t++) if (mask == null || plan.tableInside(t, mask)) all[m++] = t;
    return m == all.length ? all : Arrays.copyOf(all, m);
  }

  /** Per-thread, per-query state. */
  private static final class Scratch {
    final long[] visited;
    final int[] keys;
    int[] touched = new int[64];
    int touchedCount;
    int[] hitOrds = new int[16], hitDists = new int[16];
    int hits;
    long probes, candidates, nearProbes, nearCandidates;
    double work;
    double scanCost; // of this query (a mask selects fewer words)
    int path;
    boolean inUse, untried;
    final Partition.Visit visit = new Partition.Visit();

    Scratch(int n, int tables) {
      visited = new long[(n + 63) >>> 6];
      keys = new int[tables];
    }

    Scratch begin(MihSearcher owner, long[] query, int[] active) {
      Scratch s = inUse ? new Scratch(owner.codes.size(), owner.tables.length) : this; // re-entrant call from a filter
      s.inUse = true;
      s.touchedCount = 0;
      s.hits = 0;
      s.probes = 0;
      s.candidates = 0;
      s.nearProbes = 0;
      s.nearCandidates = 0;
      s.work = 0;
      s.scanCost = owner.scanCost;
      s.path = 0;
      s.untried = false;
      for (int t : active) s.keys[t] = owner.plan.key(query, 0, t);
      return s;
    }

    /** Marks the last query as answered by the scan (walk or head) before any other work (for {@link #lastQueryWork}). */
    void answeredBy(int path) {
      probes = candidates = 0;
      this.path = path;
    }

    void touch(int ord) {
      if (touchedCount == touched.length) touched = Arrays.copyOf(touched, touchedCount * 2);
      touched[touchedCount++] = ord;
    }

    void hit(int ord, int dist) {
      if (hits == hitOrds.length) {
        hitOrds = Arrays.copyOf(hitOrds, hits * 2);
        hitDists = Arrays.copyOf(hitDists, hits * 2);
      }
      hitOrds[hits] = ord;
      hitDists[hits++] = dist;
    }

    void end() {
      if (touchedCount > visited.length / 8) Arrays.fill(visited, 0);
      else for (int i = 0; i < touchedCount; i++) visited[touched[i] >>> 6] = 0;
      if (touched.length > 1 << 16) touched = new int[64];
      if (hitOrds.length > 1 << 16) {
        hitOrds = new int[16];
        hitDists = new int[16];
      }
      inUse = false;
    }
  }
}
