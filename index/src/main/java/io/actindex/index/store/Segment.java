package io.actindex.index.store;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.CodeSearcher;
import io.actindex.core.ScanSearcher;
import io.actindex.index.mih.SearchPlanOptions;
import io.actindex.index.mih.SearcherStats;
import io.actindex.index.mih.PlannerCalibration;
import io.actindex.index.mih.Searchers;
import java.io.DataInputStream;
import java.io.IOException;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.UUID;
import org.roaringbitmap.RoaringBitmap;

/**
 * An immutable segment: codes with their global ids, and the exact searcher over them. Ordinals are
 * local ({@code 0..size()-1}); ids ascend with ordinals, so ties by ordinal are ties by id.
 * Thread-safe.
 *
 * <p>Two files per segment, both {@link ChecksummedFile}s (header with layout hash and index UUID,
 * CRC32 footer); bodies big-endian:
 * <pre>
 * seg-S.codes   codec "actindex.codes", version 1
 *   int   segmentId S
 *   int   count n
 *   int   words per code w (must equal the layout's)
 *   byte  id mode: 0 = CONTIGUOUS, then int firstId (ids firstId..firstId+n-1)
 *                  1 = EXPLICIT,   then n ints, strictly ascending, &gt;= 0
 *   long  n*w code words, row-major (bit i of a code in word i&gt;&gt;&gt;6, bit i&amp;63); ghost bits zero
 * seg-S.tables  codec "actindex.tables", version 1
 *   int   segmentId S
 *   byte  searcher kind: 1 = SEARCHERS: the rest is the tables payload of
 *         {@link Searchers#write} (its own layout is documented there), read back with
 *         {@link Searchers#read} over the codes and checked to end exactly at the footer;
 *         0 = SCAN (nothing follows; a plain scan, accepted on read, not written)
 * </pre>
 */
public final class Segment {
  public static final String CODES_CODEC = "actindex.codes", TABLES_CODEC = "actindex.tables";
  static final int VERSION_START = 1, VERSION_CURRENT = 1;
  private static final byte CONTIGUOUS = 0, EXPLICIT = 1;
  static final byte KIND_SCAN = 0, KIND_SEARCHERS = 1;

  private final int segmentId;
  private final CodeBlock codes;
  private final int firstId;
  private final int[] ids; // null when contiguous
  private final CodeSearcher searcher;
  private final long bytes;
  private volatile SearcherStats stats; // computed when first asked (info), not at open

  private Segment(int segmentId, CodeBlock codes, int firstId, int[] ids, CodeSearcher searcher, long bytes) {
    this.segmentId = segmentId;
    this.codes = codes;
    this.firstId = firstId;
    this.ids = ids;
    this.searcher = searcher;
    this.bytes = bytes;
  }

  public static String codesName(int segmentId) {
    return "seg-" + segmentId + ".codes";
  }

  public static String tablesName(int segmentId) {
    return "seg-" + segmentId + ".tables";
  }

  /** The searcher for a new segment (the one place that picks the implementation). */
  static CodeSearcher buildSearcher(CodeBlock codes, SearchPlanOptions plan) {
    return Searchers.build(codes, plan);
  }

  /**
   * Writes the two files of a new segment and returns its manifest entry. {@code ids} holds the
   * ascending global ids of the codes (may be contiguous; then it is stored as a range).
   */
  static Manifest.SegmentEntry write(StoreIo io, Path dir, UUID uuid, int segmentId, CodeBlock codes, int[] ids,
      SearchPlanOptions plan) throws IOException {
    CodeLayout layout = codes.layout();
    int n = codes.size();
    if (ids.length != n) throw new IllegalArgumentException(ids.length + " ids for " + n + " codes");
    boolean contiguous = n == 0 || ids[n - 1] - ids[0] == n - 1;
    int firstId = n == 0 ? 0 : ids[0];
    FileRef codesRef;
    try (ChecksummedFile.Out out = ChecksummedFile.create(io, dir.resolve(codesName(segmentId)), CODES_CODEC,
        VERSION_CURRENT, layout.hash(), uuid)) {
      out.writeInt(segmentId);
      out.writeInt(n);
      out.writeInt(codes.wordsPerCode());
      if (contiguous) {
        out.writeByte(CONTIGUOUS);
        out.writeInt(firstId);
      } else {
        out.writeByte(EXPLICIT);
        writeInts(out, ids);
      }
      writeLongs(out, codes.words());
      codesRef = out.finish();
    }
    CodeSearcher searcher = buildSearcher(codes, plan);
    FileRef tablesRef;
    try (ChecksummedFile.Out out = ChecksummedFile.create(io, dir.resolve(tablesName(segmentId)), TABLES_CODEC,
        VERSION_CURRENT, layout.hash(), uuid)) {
      out.writeInt(segmentId);
      out.writeByte(KIND_SEARCHERS);
      Searchers.write(searcher, out);
      tablesRef = out.finish();
    }
    int endId = n == 0 ? 0 : ids[n - 1] + 1;
    return new Manifest.SegmentEntry(segmentId, n, firstId, endId, codesRef, tablesRef);
  }

  /** The most codes of {@code words} words one segment may hold for a codes file of at most {@code maxBytes}. */
  static int maxCodes(long maxBytes, int words) {
    long perCode = 8L * words + 4; // the code and, at worst, its explicit id
    long fit = Math.max(1, (maxBytes - 256) / perCode);
    return (int) Math.min(fit, (Integer.MAX_VALUE - 8) / words);
  }

  private static void writeLongs(java.io.DataOutput out, long[] a) throws IOException {
    java.nio.ByteBuffer buf = java.nio.ByteBuffer.allocate(1 << 16);
    for (int from = 0; from < a.length; ) {
      int len = Math.min(buf.capacity() / 8, a.length - from);
      buf.clear();
      buf.asLongBuffer().put(a, from, len);
      out.write(buf.array(), 0, 8 * len);
      from += len;
    }
  }

  private static void writeInts(java.io.DataOutput out, int[] a) throws IOException {
    java.nio.ByteBuffer buf = java.nio.ByteBuffer.allocate(1 << 16);
    for (int from = 0; from < a.length; ) {
      int len = Math.min(buf.capacity() / 4, a.length - from);
      buf.clear();
      buf.asIntBuffer().put(a, from, len);
      out.write(buf.array(), 0, 4 * len);
      from += len;
    }
  }

  /**
   * Reads both files of a manifest's segment. {@link ChecksummedFile.Check#OPEN} checks headers,
   * lengths, footers, every byte's CRC and every count and range; {@link ChecksummedFile.Check#FULL}
   * also every table key against the codes.
   */
  static Segment read(Path dir, FileSource src, Manifest m, Manifest.SegmentEntry e, ChecksummedFile.Check level) {
    CodeLayout layout = m.layout();
    Path codesFile = dir.resolve(e.codes().name()), tablesFile = dir.resolve(e.tables().name());
    ChecksummedFile.In in = ChecksummedFile.check(codesFile, src.bytes(codesFile), CODES_CODEC, VERSION_START,
        VERSION_CURRENT, layout.hash(), m.uuid(), e.codes(), level).through(src.channel(codesFile));
    int segId = in.getInt("segmentId");
    if (segId != e.segmentId()) throw in.error("segmentId is " + segId + ", the manifest says " + e.segmentId());
    int n = in.getCount("count", Integer.MAX_VALUE);
    if (n != e.count()) throw in.error("holds " + n + " codes, the manifest says " + e.count());
    int w = in.getInt("words per code");
    if (w != layout.words()) throw in.error("has " + w + " words per code, the layout " + layout + " has " + layout.words());
    byte mode = in.getByte("id mode");
    int firstId;
    int[] ids = null;
    if (mode == CONTIGUOUS) {
      firstId = in.getInt("firstId");
      if (n > 0 && (firstId != e.firstId() || (long) firstId + n != e.endId()))
        throw in.error("ids [" + firstId + "," + ((long) firstId + n) + ") differ from the manifest's ["
            + e.firstId() + "," + e.endId() + ")");
    } else if (mode == EXPLICIT) {
      ids = in.ints("ids", n);
      for (int i = 0; i < n; i++)
        if (ids[i] < e.firstId() || ids[i] >= e.endId() || (i > 0 && ids[i] <= ids[i - 1]))
          throw in.error("id " + ids[i] + " at ordinal " + i + " is out of order or outside the manifest's range");
      if (n > 0 && (ids[0] != e.firstId() || ids[n - 1] != e.endId() - 1))
        throw in.error("ids do not span the manifest's range [" + e.firstId() + "," + e.endId() + ")");
      firstId = n == 0 ? 0 : ids[0];
    } else {
      throw in.error("unknown id mode " + mode);
    }
    long[] words = in.longs("codes", Math.multiplyExact((long) n, w));
    in.end();
    CodeBlock codes;
    try {
      codes = new CodeBlock(layout, n, words);
    } catch (IllegalArgumentException ex) {
      throw in.error(ex.getMessage());
    }
    ChecksummedFile.In t = ChecksummedFile.check(tablesFile, src.bytes(tablesFile), TABLES_CODEC, VERSION_START,
        VERSION_CURRENT, layout.hash(), m.uuid(), e.tables(), level).through(src.channel(tablesFile));
    int tSeg = t.getInt("segmentId");
    if (tSeg != e.segmentId()) throw t.error("segmentId is " + tSeg + ", the manifest says " + e.segmentId());
    byte kind = t.getByte("searcher kind");
    CodeSearcher searcher;
    if (kind == KIND_SCAN) {
      t.end();
      searcher = new ScanSearcher(codes);
    } else if (kind == KIND_SEARCHERS) {
      DataInputStream payload = t.rest();
      try {
        searcher = Searchers.read(payload, codes, level == ChecksummedFile.Check.FULL);
        if (payload.available() != 0) throw t.error(payload.available() + " bytes follow the tables payload");
        t.end(); // the CRC of a big file, computed as the payload was read
      } catch (PlannerCalibration.BadCosts ex) {
        throw ex; // the machine's costs file, not this one
      } catch (BadInputException ex) {
        throw ex.getMessage().contains(t.file().toString()) ? ex : t.error("tables payload: " + ex.getMessage());
      } catch (IOException ex) {
        throw t.error("tables payload ends early or is malformed: " + ex);
      }
    } else {
      throw t.error("unknown searcher kind " + kind);
    }
    return new Segment(e.segmentId(), codes, firstId, ids, searcher, e.codes().length() + e.tables().length());
  }

  public int segmentId() {
    return segmentId;
  }

  public int size() {
    return codes.size();
  }

  public CodeBlock codes() {
    return codes;
  }

  public CodeSearcher searcher() {
    return searcher;
  }

  /** Bit plan and table occupancy of the segment's searcher. */
  public SearcherStats stats() {
    SearcherStats st = stats;
    if (st == null) stats = st = Searchers.stats(searcher);
    return st;
  }

  /** Bytes of the segment's two files. */
  public long bytes() {
    return bytes;
  }

  /** Codes of this segment whose id is not in {@code deleted}. */
  long liveCount(RoaringBitmap deleted) {
    if (deleted.isEmpty()) return size();
    if (ids == null) return size() - deleted.rangeCardinality(firstId, (long) firstId + size());
    long live = 0;
    for (int id : ids) if (!deleted.contains(id)) live++;
    return live;
  }

  /** Global id of local ordinal {@code ord}. */
  public int id(int ord) {
    return ids == null ? firstId + ord : ids[ord];
  }

  /** Local ordinal of global id {@code id}, or -1 if the segment does not hold it. */
  public int ord(int id) {
    if (ids == null) return id >= firstId && id - firstId < codes.size() ? id - firstId : -1;
    int i = Arrays.binarySearch(ids, id);
    return i >= 0 ? i : -1;
  }
}
