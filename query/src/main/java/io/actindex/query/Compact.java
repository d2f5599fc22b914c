package io.actindex.query;

import io.actindex.core.Forked;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import java.util.List;
import java.util.Objects;

/**
 * Rewrites an index's segments without the codes of deleted examples, merged into as few segments
 * as the size cap allows (one commit; every byte read is CRC-checked first). Ids do not change.
 */
public final class Compact {
  private Compact() {}

  /** {@code threads}: workers for the merged segments' search structures (0 = one per core). */
  public record Params(Path dir, int threads) {
    public Params {
      Objects.requireNonNull(dir, "dir");
      Parallel.checkThreadsOrAuto(threads);
    }

    public Params(Path dir) {
      this(dir, 0);
    }
  }

  /**
   * @param segmentsBefore segments before
   * @param segmentsAfter segments after
   * @param storedBefore codes stored before (deleted ones included)
   * @param storedAfter codes stored after (the live ones)
   * @param warnings problems that did not undo the commit
   */
  public record Result(int segmentsBefore, int segmentsAfter, long storedBefore, long storedAfter,
      List<String> warnings) {
    public Result {
      warnings = List.copyOf(warnings);
    }
  }

  public static Result run(Params p) {
    return run(p, null);
  }

  /**
   * As {@link #run(Params)}, with {@code progress} (null: none) told the codes read (every stored
   * one) then written (the live ones) of both counts together; nothing when there is nothing to do.
   */
  public static Result run(Params p, Progress progress) {
    int segsBefore;
    long before;
    try (IndexReader r = IndexReader.open(p.dir())) {
      segsBefore = r.info().segments().size();
      before = r.info().segments().stream().mapToLong(s -> s.count()).sum();
    }
    List<String> warnings;
    try (IndexWriter w = IndexWriter.open(p.dir())) {
      Forked.withThreads(p.threads(), () -> {
        w.compact(progress == null ? null : progress::update);
        return null;
      });
      warnings = w.takeWarnings();
    }
    try (IndexReader r = IndexReader.open(p.dir())) {
      return new Result(segsBefore, r.info().segments().size(), before,
          r.info().segments().stream().mapToLong(s -> s.count()).sum(), warnings);
    }
  }
}
