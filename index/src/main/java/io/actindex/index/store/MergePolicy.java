package io.actindex.index.store;

import io.actindex.core.BadParameterException;
import java.util.ArrayList;
import java.util.List;

/**
 * When segments merge, and how big one may grow: log-structured merging (O'Neil, Cheng, Gawlick and
 * O'Neil, "The Log-Structured Merge-Tree", Acta Informatica 1996) over adjacent segments. The index
 * may hold {@code mergeFactor - 1} segments per level, levels counted as the logarithm (base {@code
 * mergeFactor}) of the live codes over {@code floorCodes}: a budget that grows with the logarithm of
 * the data. Past the budget, the window of 2 to {@code mergeFactor} adjacent segments that fits
 * under the size cap and writes the fewest codes per segment it removes merges into one, so small
 * segments merge first and a big one is rewritten only when enough data has piled up beside it
 * (choosing cheap, balanced merges is common practice in search engines). Within the budget too, {@code mergeFactor} adjacent
 * segments of one size tier ({@link #tier}: the logarithm, base {@code mergeFactor}, of a segment's
 * live codes, rounded down) merge, as in size-tiered compaction (common practice): the
 * budget alone let equal batches pile up (six adds of 166,667 codes kept six segments, and a query
 * over six equal segments costs more than over a few unequal ones: docs/benchmarks.md). Every tier
 * then holds fewer than {@code mergeFactor} adjacent segments, and the budget still bounds the count.
 * When no window fits under the cap, every two adjacent segments hold more than a cap's worth, so
 * the count is at most two per cap's worth.
 *
 * <p>Deleted codes: a merge drops them, but the windows are chosen by live codes, so a big old
 * segment that nothing merges kept up to 31% of its codes deleted until {@code compact} (an audit's
 * lives of adds and deletes). When neither rule names a window, a segment whose deleted share (its
 * stored codes not live, over its stored codes) exceeds {@code maxDeletedShare} is rewritten alone
 * without them; one whose every code is deleted disappears. Why: a query pays for the dead codes it
 * passes over, about in proportion to the stored codes per live one (1M codes with 30% deleted
 * answered 10-NN 1.33-1.43x slower, per-query medians, than the same live codes rewritten; 25%
 * deleted 1.23-1.28x; one tombstone about 1.0x), and so do the disk and the open, while a rewrite at
 * share {@code t} writes {@code (1 - t) / t} live codes per deleted code it drops (3 at the default
 * 0.25, 4 at 0.2, 2 at 1/3). In a replayed life of 1M codes and 100 rounds of 1% deletes and 1%
 * adds, the policy without this rule wrote 4.82 codes per live code and left one segment 63%
 * deleted; with it at 0.25, 7.06 and at most 24.6%; at 1/3 6.21, at 0.2 7.79, at 0.1 12.62
 * (docs/benchmarks.md, "Deleted codes rewritten by the merge policy"). 0.25 bounds a query's cost
 * from dead codes near 1.3x where the writes still grow slowly; a threshold between a fifth and a
 * third is common practice in search engines. A rewrite leaves no deleted code in the segment, so
 * it never repeats until new deletes arrive.
 *
 * @param maxSegmentBytes cap on one segment's codes file; {@code add} and merges split or stop
 *     there. The default keeps every array the reader allocates well inside Java's limits.
 * @param mergeFactor segments per merge (at least 2)
 * @param floorCodes live codes below which data counts as one level
 * @param maxDeletedShare deleted share above which a segment is rewritten without its deleted
 *     codes (0 to 1; 1 never rewrites for deletes alone)
 */
public record MergePolicy(long maxSegmentBytes, int mergeFactor, int floorCodes, double maxDeletedShare) {
  /** System properties that override the defaults (tests lower them). */
  public static final String MAX_BYTES_PROPERTY = "actindex.segment.maxBytes", FACTOR_PROPERTY = "actindex.merge.factor",
      DELETED_SHARE_PROPERTY = "actindex.merge.maxDeletedShare";
  public static final long DEFAULT_MAX_SEGMENT_BYTES = 4L << 30;
  public static final int DEFAULT_MERGE_FACTOR = 4, DEFAULT_FLOOR_CODES = 65_536;
  public static final double DEFAULT_MAX_DELETED_SHARE = 0.25;

  public MergePolicy {
    if (maxSegmentBytes < 1) throw new BadParameterException("maxSegmentBytes", " must be at least 1, got " + maxSegmentBytes);
    if (mergeFactor < 2) throw new BadParameterException("mergeFactor", " must be at least 2, got " + mergeFactor);
    if (floorCodes < 1) throw new BadParameterException("floorCodes", " must be at least 1, got " + floorCodes);
    if (!(maxDeletedShare >= 0 && maxDeletedShare <= 1))
      throw new BadParameterException("maxDeletedShare", " must be from 0 to 1, got " + maxDeletedShare);
  }

  /** As the canonical constructor, with {@link #DEFAULT_MAX_DELETED_SHARE}. */
  public MergePolicy(long maxSegmentBytes, int mergeFactor, int floorCodes) {
    this(maxSegmentBytes, mergeFactor, floorCodes, DEFAULT_MAX_DELETED_SHARE);
  }

  /**
   * The defaults, or the values of {@value #MAX_BYTES_PROPERTY}, {@value #FACTOR_PROPERTY} and
   * {@value #DELETED_SHARE_PROPERTY}.
   */
  public static MergePolicy defaults() {
    String share = System.getProperty(DELETED_SHARE_PROPERTY);
    double maxDeletedShare;
    try {
      maxDeletedShare = share == null ? DEFAULT_MAX_DELETED_SHARE : Double.parseDouble(share);
    } catch (NumberFormatException e) {
      throw new BadParameterException("maxDeletedShare", " (" + DELETED_SHARE_PROPERTY + ") must be a number from 0 to 1, got '" + share + "'");
    }
    return new MergePolicy(Long.getLong(MAX_BYTES_PROPERTY, DEFAULT_MAX_SEGMENT_BYTES),
        Integer.getInteger(FACTOR_PROPERTY, DEFAULT_MERGE_FACTOR), DEFAULT_FLOOR_CODES, maxDeletedShare);
  }

  /** The most codes one segment of codes with {@code words} words may hold. */
  public int maxCodes(int words) {
    return Segment.maxCodes(maxSegmentBytes, words);
  }

  /** Segments the index may hold for {@code liveCodes} live codes before it merges. */
  int budget(long liveCodes) {
    int levels = 1 + (int) Math.floor(Math.log((double) Math.max(liveCodes, floorCodes) / floorCodes) / Math.log(mergeFactor));
    return (mergeFactor - 1) * levels;
  }

  /**
   * The size tier of a segment of {@code liveCodes} live codes: the logarithm, base {@code
   * mergeFactor}, rounded down (0 for 0). A window of one tier costs at most {@code mergeFactor}
   * times its largest member to merge and lifts its codes one tier up, so a code is rewritten about
   * once per tier.
   */
  int tier(long liveCodes) {
    int t = 0;
    for (long c = liveCodes; c >= mergeFactor; c /= mergeFactor) t++;
    return t;
  }

  /**
   * The next window of adjacent segments to merge, as [from, to) indices into {@code live} (live
   * codes per segment, in id order; {@code stored}: codes each holds, deleted ones included), or
   * null when none should: over the budget {@link #cheapest}, within it {@link #oneTier}, else the
   * first segment with too many deleted codes ({@link #tooManyDeleted}) alone.
   */
  int[] next(List<Long> live, List<Long> stored, int words) {
    long total = 0;
    for (long l : live) total += l;
    int[] window = live.size() > budget(total) ? cheapest(live, maxCodes(words)) : oneTier(live, maxCodes(words));
    for (int i = 0; window == null && i < live.size(); i++)
      if (tooManyDeleted(live.get(i), stored.get(i))) window = new int[] {i, i + 1};
    return window;
  }

  /** Whether a segment of {@code stored} codes, {@code live} of them live, is past {@code maxDeletedShare}. */
  boolean tooManyDeleted(long live, long stored) {
    return stored > live && stored - live > maxDeletedShare * stored;
  }

  /**
   * Of the windows of 2 to {@code mergeFactor} adjacent segments that fit under the cap ({@code
   * max} codes), the one that writes the fewest codes per segment it removes (sum over length - 1;
   * of equals the longer, then the first). Windows of exactly {@code mergeFactor} made the newest
   * small segments wait for a big neighbour: 1,000 adds of 1,000 codes wrote every code about 100
   * times, against about 16 (docs/benchmarks.md, "The merge policy's own worst case").
   */
  private int[] cheapest(List<Long> live, int max) {
    int[] best = null;
    double bestCost = Double.MAX_VALUE;
    for (int len = mergeFactor; len >= 2; len--)
      for (int from = 0; from + len <= live.size(); from++) {
        long sum = 0;
        for (int i = from; i < from + len; i++) sum += live.get(i);
        double cost = (double) sum / (len - 1);
        if (sum <= max && cost < bestCost) {
          best = new int[] {from, from + len};
          bestCost = cost;
        }
      }
    return best;
  }

  /**
   * Of the windows of {@code mergeFactor} adjacent segments of one size tier that fit under the cap,
   * the one whose largest member is smallest (then the smallest sum).
   */
  private int[] oneTier(List<Long> live, int max) {
    int f = mergeFactor, best = -1;
    long bestMax = Long.MAX_VALUE, bestSum = Long.MAX_VALUE;
    for (int from = 0; from + f <= live.size(); from++) {
      long sum = 0, big = 0;
      boolean oneTier = true;
      for (int i = from; i < from + f; i++) {
        sum += live.get(i);
        big = Math.max(big, live.get(i));
        oneTier &= tier(live.get(i)) == tier(live.get(from));
      }
      if (oneTier && sum <= max && (big < bestMax || (big == bestMax && sum < bestSum))) {
        best = from;
        bestMax = big;
        bestSum = sum;
      }
    }
    return best < 0 ? null : new int[] {best, best + f};
  }

  /** Splits {@code n} codes into pieces of at most {@link #maxCodes} each (lengths). */
  List<Integer> split(int n, int words) {
    int max = maxCodes(words);
    List<Integer> out = new ArrayList<>();
    int pieces = (int) ((n + (long) max - 1) / max);
    for (int i = 0; i < pieces; i++) out.add((int) ((long) n * (i + 1) / pieces - (long) n * i / pieces));
    return out;
  }
}
