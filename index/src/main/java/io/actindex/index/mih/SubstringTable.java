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
    long[] packed = new long[n];
    for (int ord = 0; ord < n; ord++) packed[ord] = ((long) (keyOf[ord] ^ FLIP) << 32) | ord;
    Arrays.sort(packed);
    int distinct = 0;
    for (int i = 0; i < n; i++) if (i == 0 || (packed[i] >>> 32) != (packed[i - 1] >>> 32)) distinct++;
    int[] keys = new int[distinct], offsets = new int[distinct + 1], ids = new int[n];
    int b = -1;
    for (int i = 0; i < n; i++) {
      if (i == 0 || (packed[i] >>> 32) != (packed[i - 1] >>> 32)) {
        keys[++b] = (int) (packed[i] >>> 32);
        offsets[b] = i;
      }
      ids[i] = (int) packed[i];
    }
    offsets[distinct] = n;
    return new SubstringTable(width, keys, offsets, ids);
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
