package io.actindex.cluster;

import java.io.Serializable;

/**
 * One code in one bucket: the example's internal {@code id}, its full {@code code} (for the
 * verification), {@code flips} (0: the code's own key; r > 0: a probe r flips away) and the
 * {@code block} it falls in when its bucket is split (0 otherwise).
 */
public final class Entry implements Serializable {
  private static final long serialVersionUID = 1L;

  public long id;
  public long[] code;
  public int flips;
  public int block;

  public Entry() {}

  public Entry(long id, long[] code, int flips) {
    this.id = id;
    this.code = code;
    this.flips = flips;
  }

  Entry inBlock(int b) {
    Entry e = new Entry(id, code, flips);
    e.block = b;
    return e;
  }
}
