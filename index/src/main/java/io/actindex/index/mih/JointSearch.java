package io.actindex.index.mih;

import io.actindex.core.CodeLayout;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hamming;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.core.ScanKernel;
import io.actindex.core.ScanSearcher;
import io.actindex.core.TopK;
import java.util.Arrays;
import java.util.List;
import java.util.function.IntFunction;
import java.util.function.IntPredicate;
import java.util.function.IntUnaryOperator;

/**
 * Exact k-NN over several code blocks (an index's segments) as if they were one: the clusters of
 * every block's {@link Partition} in one order, nearest centre first, under one running k-th
 * distance.
 *
 * <p>Searched block after block, the first block finds its own k nearest from its own clusters,
 * whose k-th distance is looser than the answer's, and every later block starts under that loose
 * cap. Here a pre-pass scans the nearest clusters of all blocks together until it holds k codes:
 * their k-th distance B bounds the answer's. Each block's planner then decides with B whether its
 * partition should finish the query (its windows under B against its tables and its scan), and the
 * clusters of those blocks are visited in one ascending order of centre distance, each window cut
 * by the current joint k-th distance (the triangle inequality, as in {@link Partition}). The other
 * blocks (no partition, or tables or scan cheaper for this query) are searched on their own
 * afterwards, capped by the k-th distance so far. Caps are inclusive, so codes tied at the k-th
 * distance still order by id. Without a partition to share (a mask, a selective filter, fewer than
 * two blocks), blocks are searched one by one, largest first, each capped the same way.
 *
 * <p>Where the time goes (1M 256-bit codes in ten segments, in-distribution 10-NN): the joint
 * order reaches the final k-th distance early (the codes scanned are within a few percent of those
 * a search told the final distance in advance would scan), so the cost is scanning the windows.
 * When every block stays in the walk, it goes on from the pre-pass's top and skips the clusters the
 * pre-pass scanned whole. Short windows cost more per code than long ones (a random short run waits
 * on memory), so small segments get clusters of at least {@link Partition#MIN_CLUSTER_SIZE} codes,
 * two windows are scanned in step ({@link ScanKernel#knnPair}; one at a time measured 3-11% faster
 * on skewed codes but up to 17% slower on dense ones out of distribution, within this machine's
 * noise: docs/benchmarks.md, "Ten segments of skewed codes, stop 19"), and the window bounds come
 * from per-radius tables, not binary searches. On skewed
 * ReLU codes ten segments of 100k scan about 1.7x the codes of one 1M segment: a cluster of 1,000
 * codes among 100k spans more of the code space than one among 1M, so more of it lies within the
 * window; how the centres are fit (sample size, rounds, seeding) changed that by about 1%. A block
 * leaves the walk for its tables only when they are estimated far cheaper than its windows
 * ({@link MihSearcher#partitionFinishes}): their estimate is optimistic on skewed codes, and a
 * block searched on its own pays its fixed work again.
 *
 * <p>Thread-safe: per-thread scratch arrays are kept in a {@link ThreadLocal}.
 */
public final class JointSearch {
  private final int words, bits; // per code (a layout sums them over its layers)
  private final long ghost; // the layout's bits past its width in the last word
  private final CodeSearcher[] blocks;
  private final IntUnaryOperator[] idOf;
  private final boolean[] sameIds; // per block: its ids are its ordinals
  private final MihSearcher[] parted; // per block: its searcher when its partition takes part, else null
  private final int[][] idAt; // per block with a partition: the id of each partition position
  private final long[] centres; // the centres of those blocks, block after block
  private final Partition[] partitionOf; // per block, null where parted is
  // per joint cluster: its block, its positions [first, end) in that block's partition, its largest
  // radius, and where its row of radiusStart begins (see atRadius)
  private final int[] blockOf, first, end, maxRadius, radiusBase;
  private final int[] radiusStart;
  private final int maxOfMaxRadius;
  private final double scanCost, walkCost;
  private final ThreadLocal<Scratch> scratch = ThreadLocal.withInitial(Scratch::new);

  /**
   * The joint search over {@code blocks} (searched in this order when one by one: largest first),
   * where {@code idOf.get(b)} maps an ordinal of block b to its id; ids must ascend with the
   * ordinals inside a block and be distinct across blocks.
   */
  public JointSearch(CodeLayout layout, List<CodeSearcher> blocks, List<IntUnaryOperator> idOf) {
    if (blocks.size() != idOf.size()) throw new IllegalArgumentException(blocks.size() + " blocks, " + idOf.size() + " id maps");
    this.words = layout.words();
    this.bits = layout.bits();
    this.ghost = io.actindex.core.CodeBlock.ghostMask(layout);
    this.blocks = blocks.toArray(new CodeSearcher[0]);
    this.idOf = idOf.toArray(new IntUnaryOperator[0]);
    sameIds = new boolean[this.blocks.length];
    for (int b = 0; b < sameIds.length; b++) { // ids ascend with the ordinals: 0 and n - 1 at the ends means every one
      int n = this.blocks[b].size();
      sameIds[b] = n == 0 || this.idOf[b].applyAsInt(0) == 0 && this.idOf[b].applyAsInt(n - 1) == n - 1;
    }
    int nb = this.blocks.length, w = words, clusters = 0;
    parted = new MihSearcher[nb];
    idAt = new int[nb][];
    long codes = 0;
    for (int b = 0; b < nb; b++) {
      codes += this.blocks[b].size();
      if (nb > 1 && this.blocks[b] instanceof MihSearcher m && m.partition != null
          && (m.strategy == SearchPlanOptions.Strategy.AUTO || m.strategy == SearchPlanOptions.Strategy.PARTITION)) {
        parted[b] = m;
        clusters += m.partition.clusters();
      }
    }
    centres = new long[Math.multiplyExact(clusters, w)];
    partitionOf = new Partition[nb];
    blockOf = new int[clusters];
    first = new int[clusters];
    end = new int[clusters];
    maxRadius = new int[clusters];
    radiusBase = new int[clusters];
    int rows = 0;
    for (int b = 0; b < nb; b++) if (parted[b] != null) rows += parted[b].partition.radiusStart.length;
    radiusStart = new int[rows];
    rows = 0;
    PlannerCosts cost = PlannerCosts.defaults();
    int g = 0, mm = 0;
    for (int b = 0; b < nb; b++) {
      if (parted[b] == null) continue;
      Partition p = parted[b].partition;
      partitionOf[b] = p;
      cost = parted[b].cost;
      System.arraycopy(p.centres, 0, centres, g * w, p.centres.length);
      for (int c = 0; c < p.clusters(); c++, g++) {
        blockOf[g] = b;
        first[g] = p.start[c];
        end[g] = p.start[c + 1];
        maxRadius[g] = p.maxRadius[c];
        radiusBase[g] = rows + p.radiusBase[c];
        mm = Math.max(mm, p.maxRadius[c]);
      }
      System.arraycopy(p.radiusStart, 0, radiusStart, rows, p.radiusStart.length);
      rows += p.radiusStart.length;
      idAt[b] = new int[p.ords.length];
      for (int i = 0; i < p.ords.length; i++) idAt[b][i] = this.idOf[b].applyAsInt(p.ords[i]);
    }
    maxOfMaxRadius = mm;
    scanCost = codes * (cost.scanPerCode() + cost.scanPerWord() * w);
    walkCost = cost.walk();
  }

  /** Blocks whose partitions are searched jointly (for tests). */
  int partitionedBlocks() {
    return (int) Arrays.stream(parted).filter(java.util.Objects::nonNull).count();
  }

  /** Blocks the last walk on this thread kept in it (for tests). */
  int walkedLast() {
    Scratch s = scratch.get();
    int c = 0;
    for (int b = 0; b < Math.min(blocks.length, s.walked.length); b++) if (s.walked[b]) c++;
    return c;
  }

  /**
   * The {@code k} nearest codes of all blocks, as ids, ties by ascending id. {@code accept}
   * (nullable) is over ids: the codes that may be returned; {@code blockAccept.apply(b)} (nullable
   * result) is the same set over block b's ordinals, for blocks searched on their own.
   * {@code mask} (nullable) limits the distance to its bits.
   */
  public Hits knn(long[] query, int k, IdSet accept, IntFunction<IntPredicate> blockAccept, long[] mask) {
    query = ScanSearcher.checkQuery(words, ghost, query, mask);
    if (k <= 0 || accept != null && accept.isEmpty()) return Hits.EMPTY;
    boolean joint = mask == null && centres.length > 0 && (accept == null || accept.count() * walkCost > scanCost);
    if (!joint && blocks.length == 1) {
      Hits h = blocks[0].knn(query, k, blockAccept.apply(0), mask);
      return sameIds[0] ? h : ids(h, idOf[0]);
    }
    Scratch s = scratch.get();
    if (s.inUse) s = new Scratch(); // re-entrant call from a filter
    s.inUse = true;
    try {
      TopK top = joint ? walk(query, k, accept, s) : new TopK(k);
      int cap = joint ? s.cap : Integer.MAX_VALUE;
      for (int b = 0; b < blocks.length; b++) {
        if (joint && s.walked[b]) continue;
        int maxDist = top.size() == k ? Math.min(cap, top.bound()) : cap;
        Hits h = blocks[b].knn(query, k, blockAccept.apply(b), mask, maxDist);
        for (int i = 0; i < h.size(); i++) top.offer(idOf[b].applyAsInt(h.ord(i)), h.dist(i));
      }
      return top.toHits();
    } finally {
      s.inUse = false;
    }
  }

  /**
   * One block's hits with its ordinals turned into ids: still sorted by (distance, id), since ids
   * ascend with the ordinals (a single block needs no merge: a masked query over a one-segment index
   * often ends after a few hundred codes, where a second top and sort were a visible share).
   */
  private static Hits ids(Hits h, IntUnaryOperator idOf) {
    int[] ids = new int[h.size()], dists = new int[h.size()];
    for (int i = 0; i < ids.length; i++) {
      ids[i] = idOf.applyAsInt(h.ord(i));
      dists[i] = h.dist(i);
    }
    return new Hits(ids, dists);
  }

  /**
   * The pre-pass, the planner and the joint walk: returns the top of the blocks it walked (marked in
   * {@code s.walked}), and leaves in {@code s.cap} the bound every other block is searched under.
   */
  private TopK walk(long[] q, int k, IdSet accept, Scratch s) {
    int total = blockOf.length, w = words;
    s.ensure(total, bits, blocks.length);
    int[] counts = s.counts, dist = s.dist, order = s.order, dq = s.dq;
    Arrays.fill(counts, 0, bits + 2, 0);
    for (int g = 0; g < total; g++) { // the clusters by centre distance: a counting sort
      dist[g] = Hamming.distance(q, 0, centres, g * w, w);
      counts[dist[g] + 1]++;
    }
    for (int x = 0; x <= bits; x++) counts[x + 1] += counts[x];
    for (int g = 0; g < total; g++) {
      int p = counts[dist[g]]++;
      order[p] = g;
      dq[p] = dist[g];
    }
    // the pre-pass: the nearest clusters of all blocks until k codes are known
    ScanKernel.Words sel = ScanKernel.Words.of(q, null, w); // once per query: the window loops below take it
    TopK pre = new TopK(k);
    int done = 0;
    while (done < total && pre.size() < k) {
      int g = order[done++], b = blockOf[g];
      if (first[g] < end[g]) ScanKernel.knn(sel, partitionOf[b].codes, w, first[g], end[g], idAt[b], accept, pre, Integer.MAX_VALUE);
    }
    for (int b = 0; b < blocks.length; b++) s.walked[b] = parted[b] != null;
    s.cap = pre.bound();
    if (done == total) return pre; // every cluster of every partition scanned whole
    int bound = Math.min(s.cap, Character.MAX_VALUE); // no distance exceeds it: keeps dq + bound from overflowing
    // each block's windows under the bound after the pre-pass, and its planner's choice
    long[] rest = s.rest;
    Arrays.fill(rest, 0, blocks.length, 0);
    int reach = total;
    for (int p = done; p < total; p++) {
      int g = order[p];
      if (dq[p] - maxOfMaxRadius > bound) {
        reach = p; // so is every later cluster
        break;
      }
      if (dq[p] - maxRadius[g] <= bound) rest[blockOf[g]] += atRadius(g, dq[p] + bound + 1) - atRadius(g, dq[p] - bound);
    }
    boolean all = true;
    for (int b = 0; b < blocks.length; b++)
      if (parted[b] != null) all &= s.walked[b] = parted[b].partitionFinishes(rest[b], q, bound);
    // the walk: the windows of the chosen blocks, cut by the joint k-th distance as it drops. When
    // every block stays, it goes on from the pre-pass (its clusters are scanned whole); else it
    // starts over, since the pre-pass holds codes of blocks searched on their own. Windows are
    // scanned two at a time (see ScanKernel.knnPair); a window kept waiting was cut under an
    // earlier, larger k-th distance, so it holds every code the current one admits.
    TopK top = all ? pre : new TopK(k);
    int waiting = -1, waitLo = 0, waitHi = 0;
    for (int p = all ? done : 0; p < reach; p++) {
      int g = order[p], b = blockOf[g];
      int cut = top.size() == k ? Math.min(bound, top.bound()) : bound;
      if (dq[p] - maxOfMaxRadius > cut) break; // no later cluster can hold a code within it
      if (dq[p] - maxRadius[g] > cut || !s.walked[b]) continue;
      int lo = atRadius(g, dq[p] - cut), hi = atRadius(g, dq[p] + cut + 1);
      if (lo >= hi) continue;
      if (waiting < 0) {
        waiting = b;
        waitLo = lo;
        waitHi = hi;
      } else {
        ScanKernel.knnPair(sel, w, partitionOf[waiting].codes, waitLo, waitHi, idAt[waiting], partitionOf[b].codes, lo, hi, idAt[b],
            accept, top, bound);
        waiting = -1;
      }
    }
    if (waiting >= 0) ScanKernel.knn(sel, partitionOf[waiting].codes, w, waitLo, waitHi, idAt[waiting], accept, top, bound);
    return top;
  }

  /**
   * The first position of joint cluster g whose code lies at least {@code r} from its centre (the
   * cluster's end if none): one look-up in a table built here, where a binary search over the
   * radii would wait on several dependent reads for each of the many small clusters visited.
   */
  private int atRadius(int g, int r) {
    if (r <= 0) return first[g];
    if (r > maxRadius[g]) return end[g];
    return radiusStart[radiusBase[g] + r];
  }

  /** Per-thread, per-query state. */
  private static final class Scratch {
    int[] order = new int[0], dq = new int[0], dist = new int[0], counts = new int[0];
    long[] rest = new long[0];
    boolean[] walked = new boolean[0];
    int cap;
    boolean inUse;

    void ensure(int clusters, int bits, int blocks) {
      if (order.length < clusters) {
        order = new int[clusters];
        dq = new int[clusters];
        dist = new int[clusters];
      }
      if (counts.length < bits + 2) counts = new int[bits + 2];
      if (rest.length < blocks) {
        rest = new long[blocks];
        walked = new boolean[blocks];
      }
    }
  }
}
