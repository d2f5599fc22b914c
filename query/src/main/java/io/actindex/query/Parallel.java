package io.actindex.query;

import io.actindex.core.BadParameterException;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.function.IntConsumer;

/**
 * Runs one task per query (or per block of work) on up to {@code threads} threads, reporting (done,
 * n) to a progress callback. Public for the report package; the {@code threads} checks stay inside.
 */
public final class Parallel {
  private Parallel() {}

  /** Refuses a {@code threads} parameter below 1 (a {@code Params} check; the caller resolves "one per core" first). */
  static void checkThreads(int threads) {
    if (threads < 1) throw new BadParameterException("threads", " must be at least 1, got " + threads);
  }

  /** Refuses a {@code threads} parameter below 0, where 0 means one per core. */
  static void checkThreadsOrAuto(int threads) {
    if (threads < 0) throw new BadParameterException("threads", " must be 0 (one per core) or more, got " + threads);
  }

  /** Calls {@code task} with {@code 0..n-1}; the first task failure is rethrown. */
  public static void forEach(int n, int threads, Progress progress, IntConsumer task) {
    Progress prog = progress == null ? Progress.NONE : progress;
    Object lock = new Object();
    long[] done = {0};
    IntConsumer one = i -> {
      task.accept(i);
      synchronized (lock) {
        prog.update(++done[0], n);
      }
    };
    if (threads <= 1 || n <= 1) {
      for (int i = 0; i < n; i++) one.accept(i);
      return;
    }
    try (ExecutorService pool = Executors.newFixedThreadPool(Math.min(threads, n))) {
      List<Future<?>> futures = new ArrayList<>();
      for (int i = 0; i < n; i++) {
        int q = i;
        futures.add(pool.submit(() -> one.accept(q)));
      }
      for (Future<?> f : futures) f.get();
    } catch (InterruptedException e) {
      Thread.currentThread().interrupt();
      throw new IllegalStateException("interrupted", e);
    } catch (ExecutionException e) {
      if (e.getCause() instanceof RuntimeException re) throw re;
      if (e.getCause() instanceof Error err) throw err;
      throw new IllegalStateException(e.getCause());
    }
  }
}
