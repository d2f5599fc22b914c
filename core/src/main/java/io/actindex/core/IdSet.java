package io.actindex.core;

import java.util.Arrays;
import java.util.function.IntPredicate;

/**
 * A set of ids (or ordinals) in {@code [0, size)} as a plain bitset: what a metadata filter selects,
 * which codes are live. Search paths recognise it (it is an {@link IntPredicate}) and read its words
 * directly: one shift and mask per test instead of a call, the count for the planner, and a walk over
 * its members when it is selective. A view ({@link #window}) shares the words of a larger set.
 * Immutable once built; thread-safe.
 */
public final class IdSet implements IntPredicate {
  private final long[] words;
  private final int base; // bit of member 0 in words
  private final int size;
  private int count = -1; // lazily counted; benign race (same value)

  private IdSet(long[] words, int base, int size, int count) {
    this.words = words;
    this.base = base;
    this.size = size;
    this.count = count;
  }

  /** The set over {@code [0, size)} whose members are the set bits of {@code words} (taken over; bits past size must be 0). */
  public static IdSet of(long[] words, int size) {
    if (size < 0 || ((long) size + 63) >>> 6 > words.length)
      throw new IllegalArgumentException(words.length + " words cannot hold " + size + " ids");
    for (int i = size; i < (long) words.length << 6; i = (i | 63) + 1)
      if ((words[i >>> 6] >>> (i & 63)) != 0) throw new IllegalArgumentException("bits set past size " + size);
    int count = 0;
    for (long x : words) count += Long.bitCount(x);
    return new IdSet(words, 0, size, count);
  }

  /** The given ids (each in {@code [0, size)}) in a set over {@code [0, size)}. */
  public static IdSet of(int size, int... ids) {
    long[] w = new long[(size + 63) >>> 6];
    for (int id : ids) {
      if (id < 0 || id >= size) throw new IllegalArgumentException("id " + id + " outside [0," + size + ")");
      w[id >>> 6] |= 1L << (id & 63);
    }
    return new IdSet(w, 0, size, -1);
  }

  /** Every id in {@code [0, size)}. */
  public static IdSet all(int size) {
    long[] w = new long[(size + 63) >>> 6];
    Arrays.fill(w, -1L);
    if ((size & 63) != 0) w[w.length - 1] = -1L >>> (64 - (size & 63));
    return new IdSet(w, 0, size, size);
  }

  /** The members of this set in {@code [from, from + size)}, renumbered from 0 (shares the words). */
  public IdSet window(int from, int size) {
    if (from < 0 || size < 0 || (long) from + size > this.size)
      throw new IllegalArgumentException("window [" + from + "," + ((long) from + size) + ") outside [0," + this.size + ")");
    return new IdSet(words, base + from, size, from == 0 && size == this.size ? count : -1);
  }

  /** The ids in both sets (same size). */
  public IdSet and(IdSet other) {
    return combine(other, false);
  }

  /** The ids of this set that are not in {@code other} (same size). */
  public IdSet andNot(IdSet other) {
    return combine(other, true);
  }

  private IdSet combine(IdSet o, boolean not) {
    if (o.size != size) throw new IllegalArgumentException("sets over " + size + " and " + o.size + " ids");
    long[] w = new long[(size + 63) >>> 6];
    for (int i = 0; i < w.length; i++) {
      long b = o.word(i);
      w[i] = word(i) & (not ? ~b : b);
    }
    if ((size & 63) != 0) w[w.length - 1] &= -1L >>> (64 - (size & 63));
    return new IdSet(w, 0, size, -1);
  }

  /** Bits {@code 64*i .. 64*i+63} of this set (ids past size read as 0 only when the words end there). */
  long word(int i) {
    int bit = base + (i << 6), wi = bit >>> 6, sh = bit & 63;
    long lo = wi < words.length ? words[wi] >>> sh : 0;
    if (sh != 0 && wi + 1 < words.length) lo |= words[wi + 1] << (64 - sh);
    int left = size - (i << 6);
    return left >= 64 ? lo : left <= 0 ? 0 : lo & (-1L >>> (64 - left));
  }

  public int size() {
    return size;
  }

  /** Number of members. */
  public int count() {
    int c = count;
    if (c < 0) {
      c = 0;
      for (int i = 0, n = (size + 63) >>> 6; i < n; i++) c += Long.bitCount(word(i));
      count = c;
    }
    return c;
  }

  public boolean isEmpty() {
    return count() == 0;
  }

  public boolean contains(int id) {
    if (id < 0 || id >= size) return false;
    int b = base + id;
    return (words[b >>> 6] >>> (b & 63) & 1) != 0;
  }

  @Override
  public boolean test(int id) {
    return contains(id);
  }

  /**
   * The members from {@code from} on, in ascending order, copied into {@code out} until it is full;
   * returns how many were copied (fewer than {@code out.length} only once the set is exhausted). For
   * loops that walk a set a block at a time: the next block starts after {@code out[m - 1]}. Sparse
   * sets spend most of a walk passing empty words, so a set whose members start on a word boundary
   * (every set but some windows) reads its words directly.
   */
  public int next(int from, int[] out) {
    if (from < 0) throw new IllegalArgumentException("from " + from + " < 0");
    int m = 0, cap = out.length, n = (size + 63) >>> 6;
    if (from >= size || cap == 0) return 0;
    int i = from >>> 6;
    boolean aligned = (base & 63) == 0;
    int off = base >>> 6;
    long x = (aligned ? words[off + i] : word(i)) & (-1L << from);
    while (true) {
      for (; x != 0; x &= x - 1) {
        int id = (i << 6) + Long.numberOfTrailingZeros(x);
        if (id >= size) return m; // a window's words run on past its end
        out[m++] = id;
        if (m == cap) return m;
      }
      if (++i >= n) return m;
      if (aligned) {
        while ((x = words[off + i]) == 0) if (++i >= n) return m;
      } else {
        x = word(i);
      }
    }
  }

  /** The members in ascending order. */
  public int[] toArray() {
    int[] out = new int[count()];
    int j = 0;
    for (int i = 0, n = (size + 63) >>> 6; i < n; i++)
      for (long x = word(i); x != 0; x &= x - 1) out[j++] = (i << 6) + Long.numberOfTrailingZeros(x);
    return out;
  }

  @Override
  public String toString() {
    return "IdSet(" + count() + " of " + size + ")";
  }
}
