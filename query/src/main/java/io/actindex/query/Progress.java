package io.actindex.query;

/**
 * Progress of a long operation, for a progress bar: {@code done} units (rows or queries) of
 * {@code total} ({@code -1} when not known in advance). May be called from worker threads, but
 * never concurrently.
 */
@FunctionalInterface
public interface Progress {
  void update(long done, long total);

  /** Reports nothing. */
  Progress NONE = (done, total) -> {};
}
