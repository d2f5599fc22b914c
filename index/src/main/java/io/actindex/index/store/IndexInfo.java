package io.actindex.index.store;

import io.actindex.core.CodeLayout;
import io.actindex.index.mih.SearcherStats;
import java.util.List;

/**
 * What the {@code info} command shows about an open index.
 *
 * @param layout the code layout
 * @param generation the manifest generation the reader opened
 * @param nextId the id the next added code gets: ids {@code 0..nextId-1} were handed out (deleted
 *     ones included; ids are never reused), so the largest id given out is {@code nextId - 1}
 * @param liveCount codes not deleted
 * @param segments one entry per segment, in id order
 * @param bytesOnDisk every file of the folder, metadata store included
 */
public record IndexInfo(CodeLayout layout, long generation, int nextId, int liveCount, List<SegmentInfo> segments,
    long bytesOnDisk) {

  public IndexInfo {
    segments = List.copyOf(segments);
  }

  /**
   * One segment.
   *
   * @param firstId first id of its range; {@code endId} is exclusive
   * @param count codes stored (deleted ones included until compaction)
   * @param deleted stored codes that are deleted
   * @param bytes its codes and tables files
   * @param searcher the searcher's plan: substrings and their widths, constant bits dropped,
   *     bucket occupancy, memory ({@link SearcherStats#toString()} is a one-line summary)
   */
  public record SegmentInfo(int segmentId, int firstId, int endId, int count, int deleted, long bytes,
      SearcherStats searcher) {

    /** Bits constant over the segment that the tables leave out (their distance is added back exactly). */
    public int droppedConstantBits() {
      return searcher.constantBits();
    }

    /** Number of substrings (hash tables); 0 for a plain scan. */
    public int substrings() {
      return searcher.substrings();
    }
  }
}
