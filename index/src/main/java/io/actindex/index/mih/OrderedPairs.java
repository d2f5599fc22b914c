package io.actindex.index.mih;

import java.util.concurrent.ArrayBlockingQueue;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Semaphore;
import java.util.concurrent.atomic.AtomicReference;
import java.util.function.LongConsumer;

/**
 * Runs numbered tasks that each produce pairs on up to {@code threads} cores and hands every pair
 * to one sink on the calling thread in task order, so the output is the same whatever the thread
 * count. Memory stays bounded whatever the number of pairs: a task writes into chunks of {@link
 * #CHUNK} pairs, each task may queue {@link #QUEUED} chunks, and only a window of {@code 4 *
 * threads} tasks is in flight. Every task in the window owns a thread (the one being drained is
 * never waiting for one), while a semaphore lets only {@code threads} of them compute at once; a
 * task whose queue is full gives its permit back while it waits.
 */
final class OrderedPairs {
  private OrderedPairs() {}

  static final int CHUNK = 8192, QUEUED = 4;

  /** The body of task {@code task}: writes its pairs to {@code out} in the order they must appear. */
  @FunctionalInterface
  interface Task {
    void run(int task, PairSink out);
  }

  private static final class Chunk {
    final int[] a = new int[CHUNK], b = new int[CHUNK], d = new int[CHUNK];
    int size;
    boolean last;
  }

  /** Runs tasks {@code 0..tasks-1}; {@code done} (nullable) gets the number of tasks drained so far. */
  static void run(int tasks, int threads, Task body, PairSink sink, LongConsumer done) {
    if (threads <= 1 || tasks <= 1) {
      for (int t = 0; t < tasks; t++) {
        body.run(t, sink);
        if (done != null) done.accept(t + 1);
      }
      return;
    }
    int window = Math.min(tasks, 4 * threads);
    Semaphore cores = new Semaphore(threads);
    AtomicReference<Throwable> failure = new AtomicReference<>();
    @SuppressWarnings("unchecked")
    ArrayBlockingQueue<Chunk>[] queues = new ArrayBlockingQueue[window];
    ExecutorService pool = Executors.newFixedThreadPool(window, r -> {
      Thread t = new Thread(r, "actindex-join");
      t.setDaemon(true);
      return t;
    });
    try {
      for (int t = 0; t < window; t++) submit(pool, queues, t, body, cores, failure);
      for (int t = 0; t < tasks; t++) {
        ArrayBlockingQueue<Chunk> q = queues[t % window];
        while (true) {
          Chunk c = q.take();
          if (failure.get() != null) throw rethrow(failure.get());
          for (int i = 0; i < c.size; i++) sink.pair(c.a[i], c.b[i], c.d[i]);
          if (c.last) break;
        }
        if (t + window < tasks) submit(pool, queues, t + window, body, cores, failure);
        if (done != null) done.accept(t + 1);
      }
    } catch (InterruptedException e) {
      Thread.currentThread().interrupt();
      throw new IllegalStateException("interrupted", e);
    } finally {
      pool.shutdownNow();
    }
  }

  private static RuntimeException rethrow(Throwable t) {
    if (t instanceof RuntimeException re) return re;
    if (t instanceof Error e) throw e;
    return new IllegalStateException(t);
  }

  private static void submit(ExecutorService pool, ArrayBlockingQueue<Chunk>[] queues, int task, Task body, Semaphore cores,
      AtomicReference<Throwable> failure) {
    ArrayBlockingQueue<Chunk> q = new ArrayBlockingQueue<>(QUEUED);
    queues[task % queues.length] = q;
    pool.execute(() -> {
      Emitter out = new Emitter(q, cores);
      try {
        cores.acquire();
        out.holding = true;
        body.run(task, out);
        out.finish();
      } catch (InterruptedException e) {
        Thread.currentThread().interrupt(); // the run was abandoned
      } catch (Throwable e) {
        failure.compareAndSet(null, e);
        Chunk end = new Chunk();
        end.last = true;
        q.clear();
        q.offer(end);
      } finally {
        if (out.holding) cores.release();
      }
    });
  }

  /** Fills chunks and queues them; waits without its permit when the queue is full. */
  private static final class Emitter implements PairSink {
    private final ArrayBlockingQueue<Chunk> q;
    private final Semaphore cores;
    private Chunk c = new Chunk();
    boolean holding;

    Emitter(ArrayBlockingQueue<Chunk> q, Semaphore cores) {
      this.q = q;
      this.cores = cores;
    }

    @Override
    public void pair(int a, int b, int distance) {
      Chunk x = c;
      x.a[x.size] = a;
      x.b[x.size] = b;
      x.d[x.size] = distance;
      if (++x.size == CHUNK) {
        hand(x);
        c = new Chunk();
      }
    }

    void finish() {
      c.last = true;
      hand(c);
    }

    private void hand(Chunk x) {
      if (q.offer(x)) return;
      cores.release();
      holding = false;
      try {
        q.put(x);
        cores.acquire();
        holding = true;
      } catch (InterruptedException e) {
        Thread.currentThread().interrupt();
        throw new Abandoned();
      }
    }
  }

  /** Thrown inside a task when the run was given up (the consumer failed or was interrupted). */
  private static final class Abandoned extends RuntimeException {
    Abandoned() {
      super("join abandoned", null, false, false);
    }
  }
}
