package io.actindex.cluster;

import java.io.Serializable;
import java.util.Arrays;

/**
 * A unit of join work: bucket {@code key} of table {@code table}, and, when the bucket is split
 * into blocks, the block pair {@code (bi, bj)} with {@code bi <= bj} (both 0 for a bucket that is
 * not split; both -1 for the bucket itself when counting its size).
 */
public final class Cell implements Serializable {
  private static final long serialVersionUID = 1L;

  public int table;
  public long[] key;
  public int bi, bj;
  private int hash;

  public Cell() {}

  public Cell(int table, long[] key, int bi, int bj) {
    this.table = table;
    this.key = key;
    this.bi = bi;
    this.bj = bj;
  }

  /** The bucket this cell belongs to. */
  Cell bucket() {
    return new Cell(table, key, -1, -1);
  }

  @Override
  public boolean equals(Object o) {
    return o instanceof Cell c && c.table == table && c.bi == bi && c.bj == bj && Arrays.equals(c.key, key);
  }

  @Override
  public int hashCode() {
    int h = hash;
    if (h == 0) {
      h = ((table * 31 + Arrays.hashCode(key)) * 31 + bi) * 31 + bj;
      h ^= h >>> 16;
      hash = h == 0 ? 1 : h;
    }
    return hash;
  }

  @Override
  public String toString() {
    return "table " + table + " key " + Arrays.toString(key) + " block " + bi + "x" + bj;
  }
}
