package io.actindex.bench;

import java.util.concurrent.atomic.AtomicInteger;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.State;

/**
 * Per-thread position in a query pool: each call gives the next query index, so a benchmark
 * cycles through different queries (each thread starts at its own offset).
 */
@State(Scope.Thread)
public class QueryCursor {
  private static final AtomicInteger THREADS = new AtomicInteger();
  private int i = THREADS.getAndIncrement() * 397;

  /** The next index in {@code [0, size)}; size is a power of two. */
  public int next(int size) {
    return i++ & (size - 1);
  }
}
