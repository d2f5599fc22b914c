package io.actindex.core;

import java.util.function.IntPredicate;

/**
 * The k-NN scan loop over a run of packed codes, shared by the plain scan and by index paths that
 * scan parts of a code array (clusters of the partition). A mask first selects the words it
 * touches: words it leaves out are never read, so a mask of some layers costs at most what the
 * unmasked scan costs. Loops per word count keep the query (and mask) words in registers (the
 * compiler cannot do that itself: they sit in a {@code long[]} that may alias the codes): every word
 * of codes of 1, 2, 3, 4 and 8 words; 1, 2, 3, 4 and 8 selected words of wider codes; with one AND
 * per word (all ones for a whole word; skipped when 4 whole words are selected, the common 256-bit
 * case). Other counts take a general loop that stops
 * counting once the bound is passed.
 *
 * <p>Distance first: the filter is asked only about codes that would enter the top k, so a filter
 * that accepts most codes costs almost nothing, and a slow predicate is called rarely.
 *
 * <p>These are the scalar loops; {@link VectorKernel} holds the Vector API ones, run where it
 * {@link VectorKernel#handles handles} the width when {@link Loops#CHOSEN} (or the caller) says
 * {@link Loops#VECTOR}.
 */
public final class ScanKernel {
  private ScanKernel() {}

  /**
   * Offers to {@code top} every code {@code i} in {@code [from, to)} of {@code data} (w words per
   * code) whose distance to {@code q} (under {@code mask}, nullable) is at most {@code maxDist} and
   * at most the running k-th distance, and that {@code accept} (nullable) accepts. The code at
   * position i is offered as ordinal {@code ords == null ? i : ords[i]}, and {@code accept} is asked
   * about that ordinal; without {@code ords}, {@code top} must hold no ordinal at or above {@code
   * from}. {@code q} must have its ghost bits cleared.
   */
  public static void knn(long[] q, long[] mask, long[] data, int w, int from, int to, int[] ords,
      IntPredicate accept, TopK top, int maxDist) {
    if (from < to) knn(Words.of(q, mask, w), data, w, from, to, ords, accept, top, maxDist);
  }

  /*
   * Two families of loops. Every word of the code selected (no mask, or a mask touching every
   * word): a constant stride, so the compiler can drop the array bounds checks (a mask of 1-word
   * codes took 2.5x through a variable-stride loop in ScanKernelBench). Some words: the code width
   * is the stride, a variable; those loops win by reading fewer words.
   */

  /** As {@link #knn(long[], long[], long[], int, int, int, int[], IntPredicate, TopK, int)} with the selection made once per query. */
  public static void knn(Words s, long[] data, int w, int from, int to, int[] ords, IntPredicate accept, TopK top,
      int maxDist) {
    knn(Loops.CHOSEN, s, data, w, from, to, ords, accept, top, maxDist);
  }

  /** As {@link #knn(Words, long[], int, int, int, int[], IntPredicate, TopK, int)} through the given loops (benchmarks and tests). */
  public static void knn(Loops loops, Words s, long[] data, int w, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    if (startBound(top, ords, maxDist) < 0) return; // k codes at distance 0 before this run: none of it can enter
    if (loops == Loops.VECTOR && to - from >= 8 && VectorKernel.handles(w, s.at.length)) {
      from = VectorKernel.knn(s.wq, s.wm, data, w, from, to, ords, accept, top, maxDist);
      if (from == to) return;
    }
    if (s.at.length == w) {
      switch (w) {
        case 1 -> all1(s.q, s.m, data, from, to, ords, accept, top, maxDist);
        case 2 -> all2(s.q, s.m, data, from, to, ords, accept, top, maxDist);
        case 3 -> all3(s.q, s.m, data, from, to, ords, accept, top, maxDist);
        case 4 -> {
          if (s.whole) all4(s.q, data, from, to, ords, accept, top, maxDist);
          else knn4(s, data, w, from, to, ords, accept, top, maxDist);
        }
        case 8 -> all8(s.q, s.m, data, from, to, ords, accept, top, maxDist);
        default -> knnAny(s, data, w, from, to, ords, accept, top, maxDist);
      }
      return;
    }
    if (s.at.length > 4 && s.run()) { // a layer of whole words (512 bits of 1,024, ...): one contiguous run
      if (s.at.length == 8) run8(s, data, w, from, to, ords, accept, top, maxDist);
      else runAny(s, data, w, from, to, ords, accept, top, maxDist);
      return;
    }
    switch (s.at.length) {
      case 1 -> knn1(s, data, w, from, to, ords, accept, top, maxDist);
      case 2 -> knn2(s, data, w, from, to, ords, accept, top, maxDist);
      case 3 -> knn3(s, data, w, from, to, ords, accept, top, maxDist);
      case 4 -> knn4(s, data, w, from, to, ords, accept, top, maxDist);
      case 8 -> knn8(s, data, w, from, to, ords, accept, top, maxDist);
      default -> knnAny(s, data, w, from, to, ords, accept, top, maxDist);
    }
  }

  /**
   * {@link #knn} (no mask) over two runs at once: positions {@code [aFrom, aTo)} of {@code a} and
   * {@code [bFrom, bTo)} of {@code b}, offered as {@code aOrds[i]} and {@code bOrds[i]}. Reading
   * two runs in step keeps two streams of memory reads in flight, which pays when the runs are
   * short (a few hundred codes at random places, as the windows of small clusters are); for 4-word
   * codes it is one loop, for other widths it is the two runs one after the other. {@code s}: the
   * query's words without a mask ({@code Words.of(q, null, w)}, made once per query).
   */
  public static void knnPair(Words s, int w, long[] a, int aFrom, int aTo, int[] aOrds, long[] b, int bFrom, int bTo,
      int[] bOrds, IntPredicate accept, TopK top, int maxDist) {
    int both = Math.min(aTo - aFrom, bTo - bFrom);
    if (w == 4 && Loops.CHOSEN == Loops.SCALAR) {
      long[] q = s.q;
      long q0 = q[0], q1 = q[1], q2 = q[2], q3 = q[3];
      int bound = Math.min(maxDist, top.bound());
      for (int t = 0, i = aFrom, j = bFrom, ai = aFrom * 4, bj = bFrom * 4; t < both; t++, i++, j++, ai += 4, bj += 4) {
        int da = Long.bitCount(a[ai] ^ q0) + Long.bitCount(a[ai + 1] ^ q1) + Long.bitCount(a[ai + 2] ^ q2) + Long.bitCount(a[ai + 3] ^ q3);
        int db = Long.bitCount(b[bj] ^ q0) + Long.bitCount(b[bj + 1] ^ q1) + Long.bitCount(b[bj + 2] ^ q2) + Long.bitCount(b[bj + 3] ^ q3);
        if (da <= bound) bound = offer(i, da, aOrds, accept, top, maxDist, bound);
        if (db <= bound) bound = offer(j, db, bOrds, accept, top, maxDist, bound);
      }
    } else {
      both = 0;
    }
    if (aFrom + both < aTo) knn(s, a, w, aFrom + both, aTo, aOrds, accept, top, maxDist);
    if (bFrom + both < bTo) knn(s, b, w, bFrom + both, bTo, bOrds, accept, top, maxDist);
  }

  /**
   * The positions {@code y} in {@code [from, to)} of {@code data} (w words per code) whose code is
   * within {@code radius} of the code at word {@code qOff} of {@code q} (which may be {@code data}
   * itself), written to {@code out} in ascending order; returns their count. The hot loop of the
   * self-join (one member of a bucket against the later ones).
   */
  public static int within(long[] q, int qOff, long[] data, int w, int from, int to, int radius, int[] out) {
    return within(Loops.CHOSEN, q, qOff, data, w, from, to, radius, out);
  }

  /** As {@link #within(long[], int, long[], int, int, int, int, int[])} through the given loops (benchmarks and tests). */
  public static int within(Loops loops, long[] q, int qOff, long[] data, int w, int from, int to, int radius, int[] out) {
    int found = 0, y = from;
    if (loops == Loops.VECTOR && to - from >= 8 && (w == 1 || w == 2 || w == 4)) {
      long r = VectorKernel.within(q, qOff, data, w, from, to, radius, out, 0);
      y = (int) (r >>> 32);
      found = (int) r;
    }
    if (w == 4) { // the query in registers
      long x0 = q[qOff], x1 = q[qOff + 1], x2 = q[qOff + 2], x3 = q[qOff + 3];
      for (int p = y * 4; y < to; y++, p += 4) {
        int d = Long.bitCount(x0 ^ data[p]) + Long.bitCount(x1 ^ data[p + 1]) + Long.bitCount(x2 ^ data[p + 2])
            + Long.bitCount(x3 ^ data[p + 3]);
        if (d <= radius) out[found++] = y;
      }
      return found;
    }
    for (; y < to; y++) if (Hamming.distanceBounded(q, qOff, data, y * w, w, radius) <= radius) out[found++] = y;
    return found;
  }

  /**
   * The words of a code that a mask selects: their indexes {@code at}, the query's words there
   * ({@code q}, masked) and the mask's ({@code m}); {@code whole} when every selected word is
   * covered whole (no mask: all words, whole). {@code wq} and {@code wm}: the query and the mask
   * over every word of the code, zero outside the selection and padded with zeros to a multiple of
   * 8 words (for {@link VectorKernel}).
   */
  public record Words(int[] at, long[] q, long[] m, boolean whole, long[] wq, long[] wm) {
    /** The selection of {@code mask} (nullable: every word) over codes of {@code w} words, with the query's words. */
    public static Words of(long[] q, long[] mask, int w) {
      int count = 0;
      boolean whole = true;
      for (int j = 0; j < w; j++)
        if (mask == null || mask[j] != 0) {
          count++;
          whole &= mask == null || mask[j] == -1L;
        }
      int[] at = new int[count];
      long[] qs = new long[count], ms = new long[count], wq = new long[(w + 7) & -8], wm = new long[wq.length];
      for (int j = 0, c = 0; j < w; j++)
        if (mask == null || mask[j] != 0) {
          at[c] = j;
          ms[c] = wm[j] = mask == null ? -1L : mask[j];
          qs[c] = wq[j] = q[j] & ms[c];
          c++;
        }
      return new Words(at, qs, ms, whole, wq, wm);
    }

    /** Whether the selected words are whole and in one run (a layer that starts and ends on word boundaries). */
    public boolean run() {
      return whole && at.length > 0 && at[at.length - 1] - at[0] == at.length - 1;
    }

    /**
     * Distance of the code at {@code data[off]} (w words) over the selected words if at most
     * {@code bound}, else some value above it: a run of whole words counts contiguously, others through
     * their indexes and ANDs, checking the bound every 4 words.
     */
    public int distance(long[] data, int off, int w, int bound) {
      if (at.length > 2 && run()) return Hamming.distanceBounded(q, 0, data, off + at[0], at.length, bound);
      if (at.length <= 2) // a layer of up to 128 bits: no loop
        return at.length == 0 ? 0
            : Long.bitCount((data[off + at[0]] ^ q[0]) & m[0]) + (at.length == 1 ? 0 : Long.bitCount((data[off + at[1]] ^ q[1]) & m[1]));
      int d = 0, j = 0, c = at.length;
      for (; j + 4 <= c; j += 4) {
        d += Long.bitCount((data[off + at[j]] & m[j]) ^ q[j]) + Long.bitCount((data[off + at[j + 1]] & m[j + 1]) ^ q[j + 1])
            + Long.bitCount((data[off + at[j + 2]] & m[j + 2]) ^ q[j + 2]) + Long.bitCount((data[off + at[j + 3]] & m[j + 3]) ^ q[j + 3]);
        if (d > bound) return d;
      }
      for (; j < c; j++) d += Long.bitCount((data[off + at[j]] & m[j]) ^ q[j]);
      return d;
    }
  }

  /**
   * Eight queries (laid out as for {@link #least8}) against the codes at positions {@code [from,
   * to)}: the distance of query i to the code at y in {@code out[8 * (y - from) + i]}.
   */
  public static void distances8(Loops loops, long[] q, long[] data, int w, int from, int to, long[] out) {
    if (loops == Loops.VECTOR) {
      VectorKernel.distances8(q, data, w, from, to, out);
      return;
    }
    for (int y = from, off = from * w; y < to; y++, off += w)
      for (int i = 0; i < 8; i++) {
        long d = 0;
        for (int j = 0; j < w; j++) d += Long.bitCount(data[off + j] ^ q[8 * j + i]);
        out[8 * (y - from) + i] = d;
      }
  }

  /**
   * Eight queries against one run of codes: lowers {@code best[i]} to the least distance of query
   * {@code i} (its word j at {@code q[8 * j + i]}) to the codes at positions {@code [from, to)} of
   * {@code data} (codes of {@code w} words). For passes over every code of a block (all nearest
   * others), each code is read once for eight queries. The loops are the caller's choice, not
   * {@link Loops#CHOSEN}: such a pass may run long enough to repay compiling the vector loops
   * ({@code VECTOR} only where {@link Loops#vectorUsable}); eight scalar distances per code
   * otherwise. Same answer either way.
   */
  public static void least8(Loops loops, long[] q, long[] data, int w, int from, int to, long[] best) {
    if (from >= to) return;
    if (loops == Loops.VECTOR) {
      VectorKernel.least8(q, data, w, from, to, best);
      return;
    }
    for (int off = from * w, end = to * w; off < end; off += w)
      for (int i = 0; i < 8; i++) {
        long d = 0;
        for (int j = 0; j < w; j++) d += Long.bitCount(data[off + j] ^ q[8 * j + i]);
        if (d < best[i]) best[i] = d;
      }
  }

  /**
   * Offers one code that passed the distance test; returns the new bound. A code tied with the
   * k-th distance of a full top enters only with a smaller ordinal (checked before the filter). Without {@code ords}
   * the ordinals rise with the position, so once the top is full a code tied with the k-th
   * distance can no longer enter (ties go to the smaller ordinal): the bound drops by one and such
   * ties are not offered (over one layer of skewed codes tens of thousands of codes can tie); the
   * bound drops below 0 once k codes at distance 0 are in, and the loops then stop: nothing after
   * them can enter (the scan of a masked query whose k nearest tie at 0 ends after its first few
   * hundred codes).
   */
  static int offer(int i, int d, int[] ords, IntPredicate accept, TopK top, int maxDist, int bound) {
    int ord = ords == null ? i : ords[i];
    if (((long) d << 32 | ord) >= top.worst()) return bound; // a tie that cannot enter: the filter is not asked
    if (accept != null && !accept.test(ord)) return bound;
    top.offer(ord, d);
    return startBound(top, ords, maxDist);
  }

  /**
   * The bound a loop starts under: the k-th distance so far, capped by {@code maxDist}. Without
   * {@code ords} (every position above the ordinals in the top) a full top takes no tie at its k-th
   * distance, so the bound is one less, as {@link #offer} leaves it: a run that continues an earlier
   * one (the planner's head of a masked scan, grown in steps, then the rest of the scan) must not
   * offer the thousands of codes tied at the k-th distance that one layer of skewed codes holds.
   * Below 0 (k codes at distance 0) nothing can enter.
   */
  static int startBound(TopK top, int[] ords, int maxDist) {
    int b = top.bound();
    return Math.min(maxDist, ords == null && b != Integer.MAX_VALUE ? b - 1 : b);
  }

  private static void knn1(Words s, long[] data, int w, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = s.q[0], m0 = s.m[0];
    int bound = startBound(top, ords, maxDist);
    for (int i = from, off = from * w + s.at[0]; i < to; i++, off += w) {
      int d = Long.bitCount((data[off] ^ q0) & m0);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  private static void knn2(Words s, long[] data, int w, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = s.q[0], q1 = s.q[1], m0 = s.m[0], m1 = s.m[1];
    int j0 = s.at[0], j1 = s.at[1];
    int bound = startBound(top, ords, maxDist);
    for (int i = from, off = from * w; i < to; i++, off += w) {
      int d = Long.bitCount((data[off + j0] ^ q0) & m0) + Long.bitCount((data[off + j1] ^ q1) & m1);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  private static void knn3(Words s, long[] data, int w, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = s.q[0], q1 = s.q[1], q2 = s.q[2], m0 = s.m[0], m1 = s.m[1], m2 = s.m[2];
    int j0 = s.at[0], j1 = s.at[1], j2 = s.at[2];
    int bound = startBound(top, ords, maxDist);
    for (int i = from, off = from * w; i < to; i++, off += w) {
      int d = Long.bitCount((data[off + j0] ^ q0) & m0) + Long.bitCount((data[off + j1] ^ q1) & m1)
          + Long.bitCount((data[off + j2] ^ q2) & m2);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  private static void knn4(Words s, long[] data, int w, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = s.q[0], q1 = s.q[1], q2 = s.q[2], q3 = s.q[3];
    int j0 = s.at[0], j1 = s.at[1], j2 = s.at[2], j3 = s.at[3];
    int bound = startBound(top, ords, maxDist);
    if (s.whole) { // the common case (256-bit codes, 256-bit layers) without the four ANDs
      for (int i = from, off = from * w; i < to; i++, off += w) {
        int d = Long.bitCount(data[off + j0] ^ q0) + Long.bitCount(data[off + j1] ^ q1)
            + Long.bitCount(data[off + j2] ^ q2) + Long.bitCount(data[off + j3] ^ q3);
        if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
      }
      return;
    }
    long m0 = s.m[0], m1 = s.m[1], m2 = s.m[2], m3 = s.m[3];
    for (int i = from, off = from * w; i < to; i++, off += w) {
      int d = Long.bitCount((data[off + j0] ^ q0) & m0) + Long.bitCount((data[off + j1] ^ q1) & m1)
          + Long.bitCount((data[off + j2] ^ q2) & m2) + Long.bitCount((data[off + j3] ^ q3) & m3);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  private static void knn8(Words s, long[] data, int w, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = s.q[0], q1 = s.q[1], q2 = s.q[2], q3 = s.q[3], q4 = s.q[4], q5 = s.q[5], q6 = s.q[6], q7 = s.q[7];
    int j0 = s.at[0], j1 = s.at[1], j2 = s.at[2], j3 = s.at[3], j4 = s.at[4], j5 = s.at[5], j6 = s.at[6], j7 = s.at[7];
    long m0 = s.m[0], m1 = s.m[1], m2 = s.m[2], m3 = s.m[3], m4 = s.m[4], m5 = s.m[5], m6 = s.m[6], m7 = s.m[7];
    int bound = startBound(top, ords, maxDist);
    for (int i = from, off = from * w; i < to; i++, off += w) {
      int d = Long.bitCount((data[off + j0] ^ q0) & m0) + Long.bitCount((data[off + j1] ^ q1) & m1)
          + Long.bitCount((data[off + j2] ^ q2) & m2) + Long.bitCount((data[off + j3] ^ q3) & m3);
      if (d > bound) continue;
      d += Long.bitCount((data[off + j4] ^ q4) & m4) + Long.bitCount((data[off + j5] ^ q5) & m5)
          + Long.bitCount((data[off + j6] ^ q6) & m6) + Long.bitCount((data[off + j7] ^ q7) & m7);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  /*
   * A run of whole words: no masks and one offset, so the loop keeps only the query words in
   * registers (the general loops of 8 selected words hold 8 query words, 8 mask words and 8
   * indexes, more than the registers, and took 2-3x the unmasked scan of 1,024-bit codes).
   */
  private static void run8(Words s, long[] data, int w, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = s.q[0], q1 = s.q[1], q2 = s.q[2], q3 = s.q[3], q4 = s.q[4], q5 = s.q[5], q6 = s.q[6], q7 = s.q[7];
    int bound = startBound(top, ords, maxDist);
    for (int i = from, off = from * w + s.at[0]; i < to; i++, off += w) {
      int d = Long.bitCount(data[off] ^ q0) + Long.bitCount(data[off + 1] ^ q1)
          + Long.bitCount(data[off + 2] ^ q2) + Long.bitCount(data[off + 3] ^ q3);
      if (d > bound) continue;
      d += Long.bitCount(data[off + 4] ^ q4) + Long.bitCount(data[off + 5] ^ q5)
          + Long.bitCount(data[off + 6] ^ q6) + Long.bitCount(data[off + 7] ^ q7);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  private static void runAny(Words s, long[] data, int w, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    int c = s.at.length, bound = startBound(top, ords, maxDist);
    for (int i = from, off = from * w + s.at[0]; i < to; i++, off += w) {
      int d = Hamming.distanceBounded(s.q, 0, data, off, c, bound);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  private static void all1(long[] q, long[] m, long[] data, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = q[0], m0 = m[0];
    int bound = startBound(top, ords, maxDist);
    for (int i = from; i < to; i++) {
      int d = Long.bitCount((data[i] ^ q0) & m0);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  private static void all2(long[] q, long[] m, long[] data, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = q[0], q1 = q[1], m0 = m[0], m1 = m[1];
    int bound = startBound(top, ords, maxDist);
    for (int i = from, off = from * 2; i < to; i++, off += 2) {
      int d = Long.bitCount((data[off] ^ q0) & m0) + Long.bitCount((data[off + 1] ^ q1) & m1);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  private static void all3(long[] q, long[] m, long[] data, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = q[0], q1 = q[1], q2 = q[2], m0 = m[0], m1 = m[1], m2 = m[2];
    int bound = startBound(top, ords, maxDist);
    for (int i = from, off = from * 3; i < to; i++, off += 3) {
      int d = Long.bitCount((data[off] ^ q0) & m0) + Long.bitCount((data[off + 1] ^ q1) & m1)
          + Long.bitCount((data[off + 2] ^ q2) & m2);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  private static void all4(long[] q, long[] data, int from, int to, int[] ords, IntPredicate accept, TopK top,
      int maxDist) {
    long q0 = q[0], q1 = q[1], q2 = q[2], q3 = q[3];
    int bound = startBound(top, ords, maxDist);
    for (int i = from, off = from * 4; i < to; i++, off += 4) {
      int d = Long.bitCount(data[off] ^ q0) + Long.bitCount(data[off + 1] ^ q1)
          + Long.bitCount(data[off + 2] ^ q2) + Long.bitCount(data[off + 3] ^ q3);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  private static void all8(long[] q, long[] m, long[] data, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    long q0 = q[0], q1 = q[1], q2 = q[2], q3 = q[3], q4 = q[4], q5 = q[5], q6 = q[6], q7 = q[7];
    long m0 = m[0], m1 = m[1], m2 = m[2], m3 = m[3], m4 = m[4], m5 = m[5], m6 = m[6], m7 = m[7];
    int bound = startBound(top, ords, maxDist);
    for (int i = from, off = from * 8; i < to; i++, off += 8) {
      int d = Long.bitCount((data[off] ^ q0) & m0) + Long.bitCount((data[off + 1] ^ q1) & m1)
          + Long.bitCount((data[off + 2] ^ q2) & m2) + Long.bitCount((data[off + 3] ^ q3) & m3);
      if (d > bound) continue;
      d += Long.bitCount((data[off + 4] ^ q4) & m4) + Long.bitCount((data[off + 5] ^ q5) & m5)
          + Long.bitCount((data[off + 6] ^ q6) & m6) + Long.bitCount((data[off + 7] ^ q7) & m7);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  /** Any other selection, one code at a time ({@link Words#distance}). */
  private static void knnAny(Words s, long[] data, int w, int from, int to, int[] ords, IntPredicate accept,
      TopK top, int maxDist) {
    int bound = startBound(top, ords, maxDist);
    if (s.whole && s.at.length == w) { // every word: the contiguous kernel, no selection per code
      for (int i = from, off = from * w; i < to; i++, off += w) {
        int d = Hamming.distanceBounded(s.q, 0, data, off, w, bound);
        if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
      }
      return;
    }
    for (int i = from, off = from * w; i < to; i++, off += w) {
      int d = s.distance(data, off, w, bound);
      if (d <= bound && (bound = offer(i, d, ords, accept, top, maxDist, bound)) < 0) return;
    }
  }

  /**
   * Like {@link #knn} over the members of {@code set} only (ordinals = positions), in ascending
   * order: the path for a selective filter, whose cost follows the set's size, not the code count.
   */
  public static void knnMembers(long[] q, long[] mask, long[] data, int w, IdSet set, TopK top, int maxDist) {
    if (w == 4 && mask == null) {
      knnMembers4(q, data, set, top, maxDist);
      return;
    }
    Words s = Words.of(q, mask, w);
    int bound = Math.min(maxDist, top.bound());
    int[] block = new int[MEMBER_BLOCK];
    for (int from = 0, m = MEMBER_BLOCK; m == MEMBER_BLOCK && (m = set.next(from, block)) > 0; from = block[m - 1] + 1)
      for (int j = 0; j < m; j++) {
        int ord = block[j];
        int d = s.distance(data, ord * w, w, bound);
        if (d <= bound) {
          top.offer(ord, d);
          bound = Math.min(maxDist, top.bound());
        }
      }
  }

  /** Members taken from a set at a time by the member walks ({@link IdSet#next}). */
  private static final int MEMBER_BLOCK = 256;

  /**
   * {@link #knnMembers} for unmasked 4-word codes: every member is a random access far from the
   * last, so the loop is kept short (query words in registers, no bound test inside a code) for the
   * processor to keep more of those loads in flight.
   */
  private static void knnMembers4(long[] q, long[] data, IdSet set, TopK top, int maxDist) {
    long q0 = q[0], q1 = q[1], q2 = q[2], q3 = q[3];
    int bound = Math.min(maxDist, top.bound());
    int[] block = new int[MEMBER_BLOCK];
    for (int from = 0, m = MEMBER_BLOCK; m == MEMBER_BLOCK && (m = set.next(from, block)) > 0; from = block[m - 1] + 1)
      for (int j = 0; j < m; j++) {
        int o = block[j] << 2;
        int d = Long.bitCount(q0 ^ data[o]) + Long.bitCount(q1 ^ data[o + 1]) + Long.bitCount(q2 ^ data[o + 2]) + Long.bitCount(q3 ^ data[o + 3]);
        if (d <= bound) {
          top.offer(o >>> 2, d);
          bound = Math.min(maxDist, top.bound());
        }
      }
  }
}
