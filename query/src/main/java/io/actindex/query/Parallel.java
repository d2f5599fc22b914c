package io.actindex.query;

import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.function.IntConsumer;

/** Runs one task per query on up to {@code threads} threads, reporting (done, n) to a progress callback. */
final class Parallel {
  private Parallel() {}

  /** Calls {@code task} with {@code 0..n-1}; the first task failure is rethrown. */
  static void forEach(int n, int threads, Progress progress, IntConsumer task) {
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
      throw new IllegalStateException(e.getCause());
    }
  }
}
