package io.actindex.index.mih;

import io.actindex.core.CodeBlock;
import java.util.Arrays;

/**
 * The distinct codes of a {@link CodeBlock} and which ordinals hold each: one pass with an
 * open-addressing hash over whole codes. Distinct code {@code u} is numbered by its first holder,
 * so distinct numbers ascend with their smallest ordinal, and the holders of each are listed in
 * ascending ordinal order. This is the exact-duplicate (radius 0) join, and the self-join runs on
 * the distinct codes only, so a crowd of identical codes costs one code, not a quadratic bucket.
 * Immutable.
 */
public final class DistinctCodes {
  private final CodeBlock distinct;
  private final int[] distinctOf; // by ordinal
  private final int[] offsets; // CSR by distinct code
  private final int[] holders;
  private final int[] slots; // open addressing: distinct number + 1, 0 = empty

  private DistinctCodes(CodeBlock distinct, int[] distinctOf, int[] offsets, int[] holders, int[] slots) {
    this.distinct = distinct;
    this.slots = slots;
    this.distinctOf = distinctOf;
    this.offsets = offsets;
    this.holders = holders;
  }

  public static DistinctCodes of(CodeBlock codes) {
    int n = codes.size(), w = codes.wordsPerCode();
    long[] data = codes.words();
    int cap = Integer.highestOneBit(Math.max(2, n) * 2 - 1) << 1;
    int[] slots = new int[cap]; // distinct number + 1, 0 = empty
    int[] distinctOf = new int[n];
    int[] first = new int[n]; // first holder of each distinct code
    int count = 0;
    for (int i = 0; i < n; i++) {
      int s = hash(data, i * w, w) & (cap - 1);
      while (true) {
        int u = slots[s] - 1;
        if (u < 0) {
          slots[s] = count + 1;
          first[count] = i;
          distinctOf[i] = count++;
          break;
        }
        if (Arrays.equals(data, first[u] * w, first[u] * w + w, data, i * w, i * w + w)) {
          distinctOf[i] = u;
          break;
        }
        s = (s + 1) & (cap - 1);
      }
    }
    long[] words = new long[Math.multiplyExact(count, w)];
    for (int u = 0; u < count; u++) System.arraycopy(data, first[u] * w, words, u * w, w);
    int[] offsets = new int[count + 1];
    for (int i = 0; i < n; i++) offsets[distinctOf[i] + 1]++;
    for (int u = 0; u < count; u++) offsets[u + 1] += offsets[u];
    int[] fill = Arrays.copyOf(offsets, count), holders = new int[n];
    for (int i = 0; i < n; i++) holders[fill[distinctOf[i]]++] = i;
    return new DistinctCodes(new CodeBlock(codes.layout(), count, words), distinctOf, offsets, holders, slots);
  }

  private static int hash(long[] data, int off, int w) {
    long h = 0x9E3779B97F4A7C15L;
    for (int j = 0; j < w; j++) {
      h ^= data[off + j];
      h *= 0xBF58476D1CE4E5B9L;
      h ^= h >>> 31;
    }
    return (int) (h ^ (h >>> 32));
  }

  /** The distinct code equal to the code at {@code q[off..]} (same width), or -1. */
  public int find(long[] q, int off) {
    long[] data = distinct.words();
    int w = distinct.wordsPerCode(), mask = slots.length - 1;
    for (int s = hash(q, off, w) & mask; ; s = (s + 1) & mask) {
      int u = slots[s] - 1;
      if (u < 0) return -1;
      if (Arrays.equals(data, u * w, u * w + w, q, off, off + w)) return u;
    }
  }

  /** The distinct codes, numbered by first holder. */
  public CodeBlock codes() {
    return distinct;
  }

  public int count() {
    return distinct.size();
  }

  /** Ordinals of the input. */
  public int ordinals() {
    return distinctOf.length;
  }

  /** The distinct code held by ordinal {@code ord}. */
  public int distinctOf(int ord) {
    return distinctOf[ord];
  }

  /** How many ordinals hold distinct code {@code u}. */
  public int holders(int u) {
    return offsets[u + 1] - offsets[u];
  }

  /** The {@code i}-th smallest ordinal holding distinct code {@code u}. */
  public int holder(int u, int i) {
    return holders[offsets[u] + i];
  }

  /** Pairs of ordinals holding the same code: sum over distinct codes of C(holders, 2). */
  public long identicalPairs() {
    long p = 0;
    for (int u = 0; u < count(); u++) {
      long c = holders(u);
      p += c * (c - 1) / 2;
    }
    return p;
  }
}
