package io.actindex.index.meta;

import java.util.List;
import org.apache.lucene.index.IndexCommit;
import org.apache.lucene.index.IndexDeletionPolicy;

/**
 * Keeps the Lucene commit that the index's current manifest names ("published") and the newest
 * commit (written, maybe not yet named by a manifest); deletes every other. So a crash between the
 * Lucene commit and the manifest commit leaves the published commit in place for readers. A writer
 * opened at the published commit ({@link #publish} before the Lucene writer opens) drops every
 * other commit at once: a later one is the leftover of a change whose manifest never appeared (a
 * failure or a crash), and Lucene then also deletes the files no remaining commit references
 * (those of a failed flush). The published commit is never deleted.
 */
final class KeepPublishedPolicy extends IndexDeletionPolicy {
  private volatile long published = -1;
  private volatile String newest;

  void publish(long generation) {
    published = generation;
  }

  /** Segments file name of the newest commit seen. */
  String newest() {
    return newest;
  }

  @Override
  public void onInit(List<? extends IndexCommit> commits) {
    if (published < 0) {
      onCommit(commits);
      return;
    }
    for (IndexCommit c : commits) {
      if (c.getGeneration() == published) newest = c.getSegmentsFileName();
      else c.delete();
    }
  }

  @Override
  public void onCommit(List<? extends IndexCommit> commits) {
    if (commits.isEmpty()) return;
    IndexCommit last = commits.get(commits.size() - 1);
    newest = last.getSegmentsFileName();
    for (IndexCommit c : commits) if (c != last && c.getGeneration() != published) c.delete();
  }
}
