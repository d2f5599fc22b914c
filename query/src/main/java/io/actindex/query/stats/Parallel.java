package io.actindex.query.stats;

import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;

/** Splits {@code [0, n)} into contiguous chunks run on up to {@code threads} threads. */
final class Parallel {
  private Parallel() {}

  interface Range {
    void run(int from, int to);
  }

  static void forRange(int threads, int n, Range body) {
    int t = Math.max(1, Math.min(threads, n));
    if (t == 1) {
      body.run(0, n);
      return;
    }
    // more chunks than threads: the work per row is uneven (triangular loops)
    int chunks = Math.min(n, t * 8);
    try (ExecutorService pool = Executors.newFixedThreadPool(t)) {
      List<Future<?>> fs = new ArrayList<>();
      for (int c = 0; c < chunks; c++) {
        int from = (int) ((long) n * c / chunks), to = (int) ((long) n * (c + 1) / chunks);
        fs.add(pool.submit(() -> body.run(from, to)));
      }
      for (Future<?> f : fs) f.get();
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
