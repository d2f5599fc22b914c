package io.actindex.index.mih;

import java.util.Arrays;

/**
 * One hash table of multi-index hashing: the ordinals of all codes grouped by their key on one
 * substring. Stored as CSR arrays, {@code ids[offsets[b] .. offsets[b+1])} being bucket {@code b}.
 * Dense tables have one bucket per possible key ({@code 2^width} offsets); sparse tables keep only
 * the non-empty buckets with their keys sorted (stored XOR {@code 0x80000000} so that signed order
 * is unsigned key order). Immutable.
 */
final class SubstringTable {
  private static final int FLIP = 0x80000000;
  final int width;
  final int[] keys; // null when dense
  final int[] offsets;
  final int[] ids;

  SubstringTable(int width, int[] keys, int[] offsets, int[] ids) {
    this.width = width;
    this.keys = keys;
    this.offsets = offsets;
    this.ids = ids;
  }

  /** Groups ordinals {@code 0..n-1} by {@code keyOf[ord]} (keys of {@code width} bits). */
  static SubstringTable build(int width, int[] keyOf) {
    int n = keyOf.length;
    if (width <= 26 && (1L << width) <= 3L * n) {
      int[] offsets = new int[(1 << width) + 1];
      for (int key : keyOf) offsets[key + 1]++;
      int distinct = 0;
      for (int i = 1; i < offsets.length; i++) if (offsets[i] != 0) distinct++;
      if ((1L << width) <= 3L * distinct) {
        for (int i = 1; i < offsets.length; i++) offsets[i] += offsets[i - 1];
        int[] ids = new int[n];
        int[] fill = Arrays.copyOf(offsets, offsets.length - 1);
        for (int ord = 0; ord < n; ord++) ids[fill[keyOf[ord]]++] = ord;
        return new SubstringTable(width, null, offsets, ids);
      }
    }
    // sparse: ordinals sorted by unsigned key with a stable radix sort (16 bits per pass, low half
    // first), so that each bucket keeps its ordinals ascending
    int[] ids = new int[n], sorted = keyOf;
    if (width > 16) {
      int[] lowIds = new int[n], lowKeys = new int[n];
      radixPass(keyOf, null, 0, lowKeys, lowIds);
      radixPass(lowKeys, lowIds, 16, null, ids);
      sorted = lowKeys;
      for (int i = 0; i < n; i++) sorted[i] = keyOf[ids[i]];
    } else {
      radixPass(keyOf, null, 0, null, ids);
      int[] k = new int[n];
      for (int i = 0; i < n; i++) k[i] = keyOf[ids[i]];
      sorted = k;
    }
    int distinct = 0;
    for (int i = 0; i < n; i++) if (i == 0 || sorted[i] != sorted[i - 1]) distinct++;
    int[] keys = new int[distinct], offsets = new int[distinct + 1];
    int b = -1;
    for (int i = 0; i < n; i++)
      if (i == 0 || sorted[i] != sorted[i - 1]) {
        keys[++b] = sorted[i] ^ FLIP;
        offsets[b] = i;
      }
    offsets[distinct] = n;
    return new SubstringTable(width, keys, offsets, ids);
  }

  /**
   * One stable counting-sort pass on the 16 bits of {@code keys} at {@code shift}: position i of the
   * input holds key {@code keys[i]} and ordinal {@code ids[i]} ({@code i} itself when ids is null);
   * writes the reordered keys (when {@code outKeys} is not null) and ordinals.
   */
  private static void radixPass(int[] keys, int[] ids, int shift, int[] outKeys, int[] outIds) {
    int[] start = new int[(1 << 16) + 1];
    for (int key : keys) start[((key >>> shift) & 0xffff) + 1]++;
    for (int d = 0; d < 1 << 16; d++) start[d + 1] += start[d];
    for (int i = 0; i < keys.length; i++) {
      int p = start[(keys[i] >>> shift) & 0xffff]++;
      outIds[p] = ids == null ? i : ids[i];
      if (outKeys != null) outKeys[p] = keys[i];
    }
  }

  /** The bucket holding {@code key}, or -1 if none. */
  int bucket(int key) {
    if (keys == null) return key;
    return Math.max(-1, Arrays.binarySearch(keys, key ^ FLIP));
  }

  boolean dense() {
    return keys == null;
  }

  int buckets() {
    return offsets.length - 1;
  }

  /** The key of bucket {@code b}. */
  int keyOfBucket(int b) {
    return keys == null ? b : keys[b] ^ FLIP;
  }

  long bytes() {
    return 4L * (offsets.length + ids.length + (keys == null ? 0 : keys.length));
  }

  /** Bucket occupancy and size of this table. */
  SearcherStats.Table stats() {
    int n = ids.length;
    long nonEmpty = 0, max = 0;
    double sumSq = 0, entropy = 0;
    for (int b = 0; b + 1 < offsets.length; b++) {
      int size = offsets[b + 1] - offsets[b];
      if (size == 0) continue;
      nonEmpty++;
      max = Math.max(max, size);
      sumSq += (double) size * size;
      double p = size / (double) n;
      entropy -= p * Math.log(p) / Math.log(2);
    }
    return new SearcherStats.Table(width, dense(), nonEmpty, (int) max, n == 0 ? 0 : sumSq / n, entropy, bytes());
  }
}
