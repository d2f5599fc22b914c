package io.actindex.core;

/**
 * Keeps the {@code k} smallest (distance, ordinal) pairs offered, ties by ascending ordinal, in a
 * binary max-heap keyed on {@code (dist << 32) | ord}. The heap grows as candidates arrive, so a
 * huge {@code k} (a user asking for "all") costs memory only for what is offered. Not thread-safe.
 */
public final class TopK {
  private final int k;
  private long[] heap;
  private int size;

  public TopK(int k) {
    if (k < 1) throw new BadParameterException("k", " must be at least 1, got " + k);
    this.k = k;
    heap = new long[Math.min(k, 64)];
  }

  /** Largest distance that could still enter: the k-th best so far, or Integer.MAX_VALUE. */
  public int bound() {
    return size < k ? Integer.MAX_VALUE : (int) (heap[0] >>> 32);
  }

  /**
   * The kept pair that the next entry would push out, as {@code (dist << 32) | ord}, once k are
   * kept (else Long.MAX_VALUE): a candidate enters only if its own such key is smaller, so a code
   * tied with the k-th distance enters only with a smaller ordinal.
   */
  public long worst() {
    return size < k ? Long.MAX_VALUE : heap[0];
  }

  public int size() {
    return size;
  }

  /** A copy that goes on independently of this one. */
  public TopK copy() {
    TopK c = new TopK(k);
    c.heap = heap.clone();
    c.size = size;
    return c;
  }

  /** How many kept pairs lie at distance {@code <= dist} (a pass over the heap, no sort). */
  public int countWithin(int dist) {
    long below = ((long) dist + 1) << 32;
    int c = 0;
    for (int i = 0; i < size; i++) if (heap[i] < below) c++;
    return c;
  }

  /** Offers one candidate; ordinals must be non-negative. */
  public void offer(int ord, int dist) {
    long key = ((long) dist << 32) | ord;
    if (size < k) {
      if (size == heap.length) heap = java.util.Arrays.copyOf(heap, (int) Math.min(k, 2L * size));
      int i = size++;
      while (i > 0) {
        int parent = (i - 1) >>> 1;
        if (heap[parent] >= key) break;
        heap[i] = heap[parent];
        i = parent;
      }
      heap[i] = key;
    } else if (key < heap[0]) {
      int i = 0;
      while (true) {
        int l = 2 * i + 1;
        if (l >= size) break;
        int r = l + 1;
        int c = r < size && heap[r] > heap[l] ? r : l;
        if (heap[c] <= key) break;
        heap[i] = heap[c];
        i = c;
      }
      heap[i] = key;
    }
  }

  /** The kept pairs, sorted by (dist, ord). */
  public Hits toHits() {
    long[] sorted = java.util.Arrays.copyOf(heap, size);
    java.util.Arrays.sort(sorted);
    int[] o = new int[size], d = new int[size];
    for (int i = 0; i < size; i++) {
      o[i] = (int) sorted[i];
      d[i] = (int) (sorted[i] >>> 32);
    }
    return new Hits(o, d);
  }
}
