package io.actindex.query;

import io.actindex.index.store.IndexCheck;
import java.nio.file.Path;
import java.util.Objects;

/**
 * Verifies every byte of every file of an index (the CRC32 of each index file, every table key
 * against its codes, Lucene's checksum of every metadata file) and reports per file. Opening an
 * index checks only headers, lengths and footers of big files; this is the full check.
 */
public final class Check {
  private Check() {}

  public record Params(Path dir) {
    public Params {
      Objects.requireNonNull(dir, "dir");
    }
  }

  /** The per-file report of {@link IndexCheck}. */
  public static IndexCheck.Report run(Params p) {
    return run(p, null);
  }

  /**
   * As {@link #run(Params)}, with {@code progress} (null: none) told the files checked of all the
   * index's files (the metadata files counting one, the cross-file check one more).
   */
  public static IndexCheck.Report run(Params p, Progress progress) {
    return IndexCheck.run(p.dir(), progress == null ? null : progress::update);
  }
}
