package io.actindex.index.store;

import java.util.ArrayList;
import java.util.List;

/**
 * When segments merge, and how big one may grow (log-structured merging, as in O'Neil, Cheng,
 * Gawlick and O'Neil, "The Log-Structured Merge-Tree", Acta Informatica 1996; the adjacent-window
 * rule is common practice in search engines). A segment's level grows with the logarithm (base
 * {@code mergeFactor}) of its live codes above {@code floorCodes}; whenever {@code mergeFactor}
 * adjacent segments share a level and together fit under the size cap, they merge into one. As
 * adds append at the end, the segments form a base-{@code mergeFactor} counter: at most {@code
 * mergeFactor - 1} per level, so their count grows with the logarithm of the data (plus the
 * segments that reached the cap).
 *
 * @param maxSegmentBytes cap on one segment's codes file; {@code add} and merges split or stop
 *     there. The default keeps every array the reader allocates well inside Java's limits.
 * @param mergeFactor segments per merge (at least 2)
 * @param floorCodes segments up to this many live codes share level 0
 */
public record MergePolicy(long maxSegmentBytes, int mergeFactor, int floorCodes) {
  /** System properties that override the defaults (tests lower them). */
  public static final String MAX_BYTES_PROPERTY = "actindex.segment.maxBytes", FACTOR_PROPERTY = "actindex.merge.factor";
  public static final long DEFAULT_MAX_SEGMENT_BYTES = 4L << 30;
  public static final int DEFAULT_MERGE_FACTOR = 10, DEFAULT_FLOOR_CODES = 10_000;

  public MergePolicy {
    if (maxSegmentBytes < 1) throw new IllegalArgumentException("segment cap " + maxSegmentBytes + " < 1 byte");
    if (mergeFactor < 2) throw new IllegalArgumentException("merge factor " + mergeFactor + " < 2");
    if (floorCodes < 1) throw new IllegalArgumentException("floor " + floorCodes + " < 1");
  }

  /** The defaults, or the values of {@value #MAX_BYTES_PROPERTY} and {@value #FACTOR_PROPERTY}. */
  public static MergePolicy defaults() {
    return new MergePolicy(Long.getLong(MAX_BYTES_PROPERTY, DEFAULT_MAX_SEGMENT_BYTES),
        Integer.getInteger(FACTOR_PROPERTY, DEFAULT_MERGE_FACTOR), DEFAULT_FLOOR_CODES);
  }

  /** The most codes one segment of codes with {@code words} words may hold. */
  public int maxCodes(int words) {
    return Segment.maxCodes(maxSegmentBytes, words);
  }

  int level(long liveCodes) {
    if (liveCodes <= floorCodes) return 0;
    return 1 + (int) Math.floor(Math.log((double) liveCodes / floorCodes) / Math.log(mergeFactor));
  }

  /**
   * The next window of adjacent segments to merge, as [from, to) indices into {@code live} (live
   * codes per segment, in id order), or null. The rightmost qualifying window wins.
   */
  int[] next(List<Long> live, int words) {
    int f = mergeFactor, max = maxCodes(words);
    for (int from = live.size() - f; from >= 0; from--) {
      int lvl = level(live.get(from));
      long sum = 0;
      boolean same = true;
      for (int i = from; i < from + f && same; i++) {
        same = level(live.get(i)) == lvl;
        sum += live.get(i);
      }
      if (same && sum <= max) return new int[] {from, from + f};
    }
    return null;
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
