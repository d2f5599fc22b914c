package io.actindex.index.meta;

import java.io.IOException;
import java.util.Collection;
import java.util.Map;
import org.apache.lucene.index.IndexCommit;
import org.apache.lucene.index.SegmentInfos;
import org.apache.lucene.store.Directory;

/**
 * The one Lucene commit a manifest names, read from its segments file alone. Lucene's own list of
 * commits ({@code DirectoryReader.listCommits}) parses every {@code segments_N} of the folder, so
 * one stray file (a copy, junk, a commit cut short) made the whole store unreadable; readers and
 * the writer open this instead. Read-only: {@link #delete} is refused.
 */
final class NamedCommit extends IndexCommit {
  private final Directory dir;
  private final String segmentsFile;
  private final SegmentInfos infos;

  /** Reads {@code segmentsFile} (and the segment infos it lists) from {@code dir}. */
  NamedCommit(Directory dir, String segmentsFile) throws IOException {
    this.dir = dir;
    this.segmentsFile = segmentsFile;
    this.infos = SegmentInfos.readCommit(dir, segmentsFile);
  }

  @Override
  public String getSegmentsFileName() {
    return segmentsFile;
  }

  @Override
  public Collection<String> getFileNames() throws IOException {
    return infos.files(true);
  }

  @Override
  public Directory getDirectory() {
    return dir;
  }

  @Override
  public void delete() {
    throw new UnsupportedOperationException("the commit a manifest names is never deleted: " + segmentsFile);
  }

  @Override
  public boolean isDeleted() {
    return false;
  }

  @Override
  public int getSegmentCount() {
    return infos.size();
  }

  @Override
  public long getGeneration() {
    return infos.getGeneration();
  }

  @Override
  public Map<String, String> getUserData() {
    return infos.getUserData();
  }
}
