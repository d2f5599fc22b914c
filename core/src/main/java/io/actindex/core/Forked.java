package io.actindex.core;

import java.util.concurrent.ForkJoinPool;
import java.util.concurrent.ForkJoinTask;
import java.util.function.Supplier;

/**
 * A computation started as a fork-join task (in the caller's fork-join pool, or the common pool
 * when the caller is not in one) while the caller does something else. Unlike {@link
 * ForkJoinTask#join()}, which may rethrow a copy of a failure wrapped around the original, {@link
 * #join()} rethrows the very exception the computation threw, so messages stay as they were.
 */
public final class Forked<T> {
  private final ForkJoinTask<?> task;
  private T value;
  private Throwable failure;

  private Forked(Supplier<T> work, ForkJoinPool pool) {
    ForkJoinTask<?> t = ForkJoinTask.adapt(() -> {
      try {
        value = work.get();
      } catch (Throwable e) {
        failure = e;
      }
    });
    task = pool == null ? t.fork() : pool.submit(t);
  }

  /** Starts {@code work}. */
  public static <T> Forked<T> start(Supplier<T> work) {
    return new Forked<>(work, null);
  }

  /** The most workers a JDK fork-join pool takes (a larger count is an IllegalArgumentException). */
  static final int MAX_WORKERS = 0x7fff;

  /**
   * Runs {@code work} with {@code threads} fork-join workers (at most {@link #MAX_WORKERS}) for the parallel steps inside it (its
   * parallel streams and forked tasks run in that pool); {@code threads} 0 runs it on this thread
   * with the common pool (one worker per core, this thread included).
   */
  public static <T> T withThreads(int threads, Supplier<T> work) {
    if (threads < 0) throw new BadParameterException("threads", " must be 0 (one per core) or more, got " + threads);
    if (threads == 0) return work.get();
    try (ForkJoinPool pool = new ForkJoinPool(Math.min(threads, MAX_WORKERS))) {
      return new Forked<>(work, pool).join();
    }
  }

  /** Waits for the result; rethrows the computation's own unchecked exception or error. */
  public T join() {
    task.join();
    if (failure instanceof RuntimeException e) throw e;
    if (failure instanceof Error e) throw e;
    return value;
  }

  /** Waits for the computation to end, ignoring its result or failure (clean-up after another failure). */
  public void quietlyJoin() {
    task.quietlyJoin();
  }
}
