package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicReference;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Readers opened while a writer commits (and removes old generations' files) always see one whole
 * generation: codes, tombstones and metadata agree. No timing: before each commit the writer waits
 * until the reader has started a new open since the previous commit, so opens and commits
 * interleave on any machine, however loaded (the reader opens at least 30 times; the first open ends
 * before the second commit starts, a later one starts after the 29th).
 */
class ConcurrentReadTest {
  @TempDir Path tmp;

  @Test
  void readersOpenedDuringCommitsSeeWholeGenerations() throws Exception {
    Path dir = tmp.resolve("idx");
    IndexWriter.create(dir, CrashChild.LAYOUT, Map.of()).close();
    AtomicBoolean stop = new AtomicBoolean();
    java.util.concurrent.atomic.AtomicInteger opensStarted = new java.util.concurrent.atomic.AtomicInteger();
    AtomicReference<Throwable> failure = new AtomicReference<>();
    List<Integer> seen = new ArrayList<>();
    Thread reader = new Thread(() -> {
      try {
        do {
          opensStarted.incrementAndGet();
          try (IndexReader r = IndexReader.open(dir)) {
            int[] live = r.liveIds().toArray();
            assertEquals(live.length, r.meta().numDocs());
            for (int id : live) assertArrayEquals(CrashChild.code(id), r.code(id), "id " + id);
            assertArrayEquals(live, io.actindex.index.meta.MetaQueries.select(r.meta(), new org.apache.lucene.search.MatchAllDocsQuery()).toArray());
            seen.add(r.maxId());
          }
        } while (!stop.get());
      } catch (Throwable t) {
        failure.set(t);
      }
    });
    reader.start();
    try (IndexWriter w = IndexWriter.open(dir)) {
      int opens = 0;
      for (int step = 0; step < 30 && failure.get() == null; step++) {
        while (opensStarted.get() <= opens && failure.get() == null && reader.isAlive())
          java.util.concurrent.locks.LockSupport.parkNanos(200_000);
        opens = opensStarted.get();
        int first = w.maxId(), n = 20;
        long[] words = new long[n * CrashChild.LAYOUT.words()];
        List<Map<String, String>> rows = new ArrayList<>();
        for (int i = 0; i < n; i++) {
          System.arraycopy(CrashChild.code(first + i), 0, words, i * CrashChild.LAYOUT.words(), CrashChild.LAYOUT.words());
          rows.add(CrashChild.row(first + i));
        }
        w.add(new io.actindex.core.CodeBlock(CrashChild.LAYOUT, n, words), rows);
        if (step % 5 == 4) w.delete(first, first + 3);
        if (step % 10 == 9) w.compact();
      }
    } finally {
      stop.set(true);
      reader.join();
    }
    if (failure.get() != null) throw new AssertionError("reader failed", failure.get());
    assertTrue(seen.size() >= 30, "reader opened " + seen.size() + " times");
    assertTrue(seen.stream().distinct().count() > 1, "the reader saw more than one generation: " + seen);
  }
}
