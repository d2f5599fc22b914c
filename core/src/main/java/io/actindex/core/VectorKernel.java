package io.actindex.core;

import java.util.function.IntPredicate;
import jdk.incubator.vector.LongVector;
import jdk.incubator.vector.VectorMask;
import jdk.incubator.vector.VectorOperators;
import jdk.incubator.vector.VectorShuffle;
import jdk.incubator.vector.VectorSpecies;

/**
 * The loops of {@link ScanKernel} through the Vector API over 512-bit vectors (8 lanes of 64 bits):
 * XOR with the query, AND with the mask, a popcount per lane. Codes of 1, 2 and 4 words (and 5 to
 * 7, one vector each) go eight per step: the lanes of each code are summed by a tree of two-vector
 * permutations ({@code selectFrom} of the even and the odd lanes, added), so that eight distances
 * land in the eight lanes of one vector and are compared with the bound at once. Codes of 8 or
 * more words go one at a time (chunks added lane by lane, then one sum over the lanes). Codes
 * within the bound are offered one by one, in order, through {@link ScanKernel#offer}, so the
 * results are the scalar loops' to the ordinal. The only class that imports {@code
 * jdk.incubator.vector}: it is loaded only when {@link Loops#VECTOR} runs.
 */
final class VectorKernel {
  private VectorKernel() {}

  private static final VectorSpecies<Long> S = LongVector.SPECIES_512;
  private static final LongVector EVEN = LongVector.fromArray(S, new long[] {0, 2, 4, 6, 8, 10, 12, 14}, 0);
  private static final LongVector ODD = LongVector.fromArray(S, new long[] {1, 3, 5, 7, 9, 11, 13, 15}, 0);
  private static final LongVector ONES = LongVector.broadcast(S, -1L);
  private static final VectorShuffle<Long> REPEAT1 = VectorShuffle.fromValues(S, 0, 0, 0, 0, 0, 0, 0, 0);
  private static final VectorShuffle<Long> REPEAT2 = VectorShuffle.fromValues(S, 0, 1, 0, 1, 0, 1, 0, 1);
  private static final VectorShuffle<Long> REPEAT4 = VectorShuffle.fromValues(S, 0, 1, 2, 3, 0, 1, 2, 3);

  /** Whether the JVM has 512-bit long vectors (else this kernel is never chosen). */
  static boolean available() {
    return LongVector.SPECIES_PREFERRED.vectorBitSize() >= 512;
  }

  /**
   * Whether {@link #knn} is worth calling for codes of {@code w} words of which a mask selects
   * {@code selected} (it reads every word). Measured in-process against the scalar loops
   * (docs/benchmarks.md): not for 3 words (one vector per code took 1.6x the scalar time at 192
   * bits); for a mask of some words only on codes of 1, 2, 4 or 8 words where it selects at least
   * half (a layer of 256 or 512 bits: 0.45-0.7x; 3 of 5 words at 300 bits took 1.25x, 8 of 16 at
   * 1,024 bits 0.9-1.1x).
   */
  static boolean handles(int w, int selected) {
    if (w == 3) return false;
    return selected == w || w <= 8 && (w & (w - 1)) == 0 && 2 * selected >= w;
  }

  /**
   * Scans codes of {@code w} words from {@code from} on (query and mask words {@code q}, {@code m}:
   * every word of the code, zero where the mask selects nothing, padded with zeros to a multiple
   * of 8 words); returns the first position not scanned (the rest of a group of eight codes, or
   * codes whose last chunk would read past the array), which the caller scans.
   */
  static int knn(long[] q, long[] m, long[] data, int w, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    return switch (w) {
      case 1 -> knn1(q, m, data, from, to, ords, accept, top, maxDist);
      case 2 -> knn2(q, m, data, from, to, ords, accept, top, maxDist);
      case 4 -> knn4(q, m, data, from, to, ords, accept, top, maxDist);
      default -> w < 8 ? knnUpTo8(q, m, data, w, from, to, ords, accept, top, maxDist)
          : knnPerCode(q, m, data, w, from, to, ords, accept, top, maxDist);
    };
  }

  /**
   * {@link ScanKernel#least8} for codes of {@code w} words: each code's words broadcast to the eight
   * lanes, XORed with the eight queries' words (one vector per word), a popcount per lane, summed:
   * eight distances per code, kept as the lanewise minimum.
   */
  static void least8(long[] q, long[] data, int w, int from, int to, long[] best) {
    LongVector least = LongVector.fromArray(S, best, 0);
    if (w == 4) {
      LongVector q0 = LongVector.fromArray(S, q, 0), q1 = LongVector.fromArray(S, q, 8), q2 = LongVector.fromArray(S, q, 16),
          q3 = LongVector.fromArray(S, q, 24);
      for (int off = from * 4, end = to * 4; off < end; off += 4)
        least = least.min(bits(data[off], q0).add(bits(data[off + 1], q1)).add(bits(data[off + 2], q2)).add(bits(data[off + 3], q3)));
    } else {
      for (int off = from * w, end = to * w; off < end; off += w) {
        LongVector d = bits(data[off], LongVector.fromArray(S, q, 0));
        for (int j = 1; j < w; j++) d = d.add(bits(data[off + j], LongVector.fromArray(S, q, 8 * j)));
        least = least.min(d);
      }
    }
    least.intoArray(best, 0);
  }

  /** {@link ScanKernel#distances8}: as {@link #least8}, each code's eight distances stored instead. */
  static void distances8(long[] q, long[] data, int w, int from, int to, long[] out) {
    for (int y = from, off = from * w; y < to; y++, off += w) {
      LongVector d = bits(data[off], LongVector.fromArray(S, q, 0));
      for (int j = 1; j < w; j++) d = d.add(bits(data[off + j], LongVector.fromArray(S, q, 8 * j)));
      d.intoArray(out, 8 * (y - from));
    }
  }

  private static LongVector bits(long word, LongVector q) {
    return LongVector.broadcast(S, word).lanewise(VectorOperators.XOR, q).lanewise(VectorOperators.BIT_COUNT);
  }

  /** [a0+a1, a2+a3, a4+a5, a6+a7, b0+b1, b2+b3, b4+b5, b6+b7]. */
  private static LongVector pair(LongVector a, LongVector b) {
    return EVEN.selectFrom(a, b).add(ODD.selectFrom(a, b));
  }

  /** The query's (or mask's) {@code w} words repeated across the vector. */
  private static LongVector repeat(long[] x, int w) {
    long[] r = new long[8];
    for (int i = 0; i < 8; i++) r[i] = x[i % w];
    return LongVector.fromArray(S, r, 0);
  }

  private static LongVector count(long[] data, int off, LongVector q, LongVector m) {
    return LongVector.fromArray(S, data, off).lanewise(VectorOperators.XOR, q).and(m).lanewise(VectorOperators.BIT_COUNT);
  }

  /** Offers the codes at {@code i + lane} for the lanes of {@code hit}, in order; returns the bound. */
  private static int offer(VectorMask<Long> hit, LongVector d, long[] dist, int i, int[] ords, IntPredicate accept,
      TopK top, int maxDist, int bound) {
    d.intoArray(dist, 0);
    for (long h = hit.toLong(); h != 0; h &= h - 1) {
      int lane = Long.numberOfTrailingZeros(h);
      if (dist[lane] <= bound) bound = ScanKernel.offer(i + lane, (int) dist[lane], ords, accept, top, maxDist, bound);
    }
    return bound;
  }

  private static int knn1(long[] q, long[] m, long[] data, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    LongVector qv = repeat(q, 1), mv = repeat(m, 1);
    long[] dist = new long[8];
    int bound = ScanKernel.startBound(top, ords, maxDist), i = from;
    for (; i + 8 <= to; i += 8) {
      LongVector d = count(data, i, qv, mv);
      VectorMask<Long> hit = d.compare(VectorOperators.LE, bound);
      if (hit.anyTrue()) bound = offer(hit, d, dist, i, ords, accept, top, maxDist, bound);
    }
    return i;
  }

  private static int knn2(long[] q, long[] m, long[] data, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    LongVector qv = repeat(q, 2), mv = repeat(m, 2);
    long[] dist = new long[8];
    int bound = ScanKernel.startBound(top, ords, maxDist), i = from;
    for (int off = from * 2; i + 8 <= to; i += 8, off += 16) {
      LongVector d = pair(count(data, off, qv, mv), count(data, off + 8, qv, mv));
      VectorMask<Long> hit = d.compare(VectorOperators.LE, bound);
      if (hit.anyTrue()) bound = offer(hit, d, dist, i, ords, accept, top, maxDist, bound);
    }
    return i;
  }

  private static int knn4(long[] q, long[] m, long[] data, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    LongVector qv = repeat(q, 4), mv = repeat(m, 4);
    long[] dist = new long[8];
    int bound = ScanKernel.startBound(top, ords, maxDist), i = from;
    for (int off = from * 4; i + 8 <= to; i += 8, off += 32) {
      LongVector d = pair(pair(count(data, off, qv, mv), count(data, off + 8, qv, mv)),
          pair(count(data, off + 16, qv, mv), count(data, off + 24, qv, mv)));
      VectorMask<Long> hit = d.compare(VectorOperators.LE, bound);
      if (hit.anyTrue()) bound = offer(hit, d, dist, i, ords, accept, top, maxDist, bound);
    }
    return i;
  }

  /**
   * Codes of 5 to 7 words (3 works too), one vector each (query and mask padded with zeros, so the words of the
   * next code in the vector count nothing); stops where the last vector would read past the array.
   */
  private static int knnUpTo8(long[] q, long[] m, long[] data, int w, int from, int to, int[] ords,
      IntPredicate accept, TopK top, int maxDist) {
    LongVector qv = LongVector.fromArray(S, q, 0), mv = LongVector.fromArray(S, m, 0);
    long[] dist = new long[8];
    int bound = ScanKernel.startBound(top, ords, maxDist), i = from;
    for (int off = from * w; i + 8 <= to && off + 7 * w + 8 <= data.length; i += 8, off += 8 * w) {
      LongVector d = pair(
          pair(pair(count(data, off, qv, mv), count(data, off + w, qv, mv)),
              pair(count(data, off + 2 * w, qv, mv), count(data, off + 3 * w, qv, mv))),
          pair(pair(count(data, off + 4 * w, qv, mv), count(data, off + 5 * w, qv, mv)),
              pair(count(data, off + 6 * w, qv, mv), count(data, off + 7 * w, qv, mv))));
      VectorMask<Long> hit = d.compare(VectorOperators.LE, bound);
      if (hit.anyTrue()) bound = offer(hit, d, dist, i, ords, accept, top, maxDist, bound);
    }
    return i;
  }

  /**
   * Codes of 8 or more words: one code at a time (at 512 bits 0.5x the scalar time against 0.7x
   * for eight codes per step through the tree, and not slower at 1M codes), its words read 8 at a time
   * (query and mask padded with zeros to a multiple of 8, so the words of the next code read with
   * the last chunk count nothing), the chunks added lane by lane, then the lanes. Stops where the
   * last chunk would read past the array.
   */
  private static int knnPerCode(long[] q, long[] m, long[] data, int w, int from, int to, int[] ords,
      IntPredicate accept, TopK top, int maxDist) {
    int span = q.length, bound = ScanKernel.startBound(top, ords, maxDist), i = from;
    for (int off = from * w; i < to && off + span <= data.length; i++, off += w) {
      LongVector acc = count(data, off, LongVector.fromArray(S, q, 0), LongVector.fromArray(S, m, 0));
      for (int c = 8; c < span; c += 8) acc = acc.add(count(data, off + c, LongVector.fromArray(S, q, c), LongVector.fromArray(S, m, c)));
      int d = (int) acc.reduceLanes(VectorOperators.ADD);
      if (d <= bound) bound = ScanKernel.offer(i, d, ords, accept, top, maxDist, bound);
    }
    return i;
  }

  /**
   * The positions {@code y} in {@code [from, to)} whose code in {@code data} (w = 1, 2 or 4 words)
   * is within {@code radius} of the code at word {@code qOff} of {@code q}, written in order to
   * {@code out} from index {@code found} on, eight codes per step; returns the first position not
   * scanned (fewer than eight remain) in the high 32 bits and the new count in the low ones.
   */
  static long within(long[] q, int qOff, long[] data, int w, int from, int to, int radius, int[] out, int found) {
    LongVector qv = LongVector.fromArray(S, q, qOff, S.indexInRange(0, w)).rearrange(w == 1 ? REPEAT1 : w == 2 ? REPEAT2 : REPEAT4);
    int y = from;
    for (int off = from * w; y + 8 <= to; y += 8, off += 8 * w) {
      LongVector d = switch (w) {
        case 1 -> count(data, off, qv, ONES);
        case 2 -> pair(count(data, off, qv, ONES), count(data, off + 8, qv, ONES));
        default -> pair(pair(count(data, off, qv, ONES), count(data, off + 8, qv, ONES)),
            pair(count(data, off + 16, qv, ONES), count(data, off + 24, qv, ONES)));
      };
      for (long h = d.compare(VectorOperators.LE, radius).toLong(); h != 0; h &= h - 1)
        out[found++] = y + Long.numberOfTrailingZeros(h);
    }
    return (long) y << 32 | found;
  }
}
