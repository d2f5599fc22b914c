package io.actindex.core;

import java.util.Arrays;

/**
 * Search results: parallel arrays of ordinals and integer distances, sorted by ascending distance,
 * ties by ascending ordinal. Immutable.
 */
public final class Hits {
  private final int[] ords;
  private final int[] dists;

  /** Takes ownership of the arrays, which must already be sorted by (dist, ord). */
  public Hits(int[] ords, int[] dists) {
    if (ords.length != dists.length) throw new IllegalArgumentException("ords and dists differ in length");
    for (int i = 1; i < ords.length; i++)
      if (dists[i - 1] > dists[i] || (dists[i - 1] == dists[i] && ords[i - 1] >= ords[i]))
        throw new IllegalArgumentException("hits not sorted by (distance, ordinal) at " + i);
    this.ords = ords;
    this.dists = dists;
  }

  public static final Hits EMPTY = new Hits(new int[0], new int[0]);

  public int size() {
    return ords.length;
  }

  public int ord(int i) {
    return ords[i];
  }

  public int dist(int i) {
    return dists[i];
  }

  public int[] ords() {
    return ords.clone();
  }

  public int[] dists() {
    return dists.clone();
  }

  /** Sorts (ord, dist) pairs of length {@code size} by (dist, ord) and wraps them. */
  public static Hits sorted(int[] ords, int[] dists, int size) {
    long[] packed = new long[size];
    for (int i = 0; i < size; i++) packed[i] = ((long) dists[i] << 32) | (ords[i] & 0xffffffffL);
    Arrays.sort(packed);
    int[] o = new int[size], d = new int[size];
    for (int i = 0; i < size; i++) {
      o[i] = (int) packed[i];
      d[i] = (int) (packed[i] >>> 32);
    }
    return new Hits(o, d);
  }

  @Override
  public boolean equals(Object other) {
    return other instanceof Hits h && Arrays.equals(ords, h.ords) && Arrays.equals(dists, h.dists);
  }

  @Override
  public int hashCode() {
    return 31 * Arrays.hashCode(ords) + Arrays.hashCode(dists);
  }

  @Override
  public String toString() {
    StringBuilder sb = new StringBuilder("[");
    for (int i = 0; i < ords.length; i++) sb.append(i == 0 ? "" : ", ").append(ords[i]).append('@').append(dists[i]);
    return sb.append(']').toString();
  }
}
