package io.actindex.index.store;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeLayout;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import java.util.UUID;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import java.util.stream.Stream;

/**
 * One generation of an index folder: the file {@code manifest-N} names everything a reader opens.
 * A commit writes {@code manifest-N.tmp}, fsyncs it, renames it atomically to {@code manifest-N}
 * and fsyncs the folder; a {@code .tmp} file is never a generation. Readers open the highest N; a
 * damaged highest manifest is reported, never skipped.
 *
 * <p>Format: a {@link ChecksummedFile} with codec {@value #CODEC}, version 1, whose header carries
 * the layout hash and the index UUID. Body (big-endian; strings as int byte length + UTF-8;
 * a FileRef is string name, long length, int CRC32):
 * <pre>
 * long    generation N (equals the file name's N)
 * string  layout, as CodeLayout.toString(); its hash must equal the header's layout hash
 * int     nextId: ids 0..nextId-1 were handed out (maxId)
 * int     nextSegmentId
 * int     segment count S, then S times:
 *           int segmentId, int count, int firstId, int endId (exclusive id range), FileRef codes, FileRef tables
 *         (segments in ascending, non-overlapping id ranges, endId &lt;= nextId, count &lt;= endId-firstId)
 * byte    1 if a tombstones file follows, else 0; then FileRef tombstones
 * int     property count, then (string key, string value) sorted by key
 * int     attachment count, then (string name, FileRef file) sorted by name
 * string  metadata commit: the Lucene segments file (in subfolder meta) this generation uses
 * version 2 adds:
 * int     magnitudes count, then (int segmentId, FileRef magnitudes) by ascending segmentId: the
 *         {@link Magnitudes} file of each listed segment (every segmentId must be a listed segment)
 * version 3 adds:
 * int     documented range count R, then R times int firstId, int endId: the ids that have a
 *         metadata document (ascending, disjoint, non-adjacent, inside [0, nextId)); every other id
 *         has only its synthesized key "row-ID" and no document. Versions 1 and 2: every id.
 * </pre>
 * Version 1 manifests (no magnitudes) are still read.
 */
public record Manifest(long generation, UUID uuid, CodeLayout layout, int nextId, int nextSegmentId,
    List<SegmentEntry> segments, FileRef tombstones, Map<String, String> properties,
    Map<String, FileRef> attachments, String metaCommit, Map<Integer, FileRef> magnitudes, List<IdRange> documented) {

  public static final String CODEC = "actindex.manifest";
  static final int VERSION_START = 1, VERSION_CURRENT = 3;

  /**
   * A property that a builder puts among the properties it creates an index with: the number of
   * examples its first change commits. Creating publishes an empty index at once, so a builder
   * killed before that change leaves one; while no id is given out, such an index is an unfinished
   * build, refused by readers, writers and the check ({@link #read} refuses it) instead of taken for
   * an index whose examples were all deleted, or grown by adds that would hide the loss.
   */
  public static final String BUILD_ROWS = "build.rows";

  /** Refuses an unfinished build (see {@link #BUILD_ROWS}) in {@code dir}; every {@link #read} does. */
  private void refuseUnfinished(Path dir) {
    String rows = properties.get(BUILD_ROWS);
    if (rows != null && nextId == 0)
      throw new BadInputException("index " + dir + ": an unfinished build: " + fileName(generation) + " holds none of the "
          + rows + " examples the build was to commit (it is still running, or it was stopped by a kill or power loss "
          + "before committing them); remove the folder and build again");
  }
  /** The manifest of generation N is named exactly as {@link #fileName} writes it: no leading zeros ("manifest-0099" is a stray file). */
  private static final Pattern NAME = Pattern.compile("manifest-(0|[1-9]\\d{0,17})");

  /** One segment as the manifest lists it. */
  public record SegmentEntry(int segmentId, int count, int firstId, int endId, FileRef codes, FileRef tables) {
    public SegmentEntry {
      if (count < 0 || firstId < 0 || endId < firstId || count > endId - firstId)
        throw new IllegalArgumentException("segment " + segmentId + ": bad id range [" + firstId + "," + endId
            + ") for " + count + " codes");
    }
  }

  /** Ids {@code [firstId, endId)}. */
  public record IdRange(int firstId, int endId) {}

  public Manifest {
    segments = List.copyOf(segments);
    documented = List.copyOf(documented);
    properties = java.util.Collections.unmodifiableMap(new TreeMap<>(properties));
    attachments = java.util.Collections.unmodifiableMap(new TreeMap<>(attachments));
    magnitudes = java.util.Collections.unmodifiableMap(new TreeMap<>(magnitudes == null ? Map.of() : magnitudes));
  }

  /** A generation without kept magnitudes. */
  public Manifest(long generation, UUID uuid, CodeLayout layout, int nextId, int nextSegmentId, List<SegmentEntry> segments,
      FileRef tombstones, Map<String, String> properties, Map<String, FileRef> attachments, String metaCommit) {
    this(generation, uuid, layout, nextId, nextSegmentId, segments, tombstones, properties, attachments, metaCommit, Map.of(),
        List.of());
  }

  /** The same generation with segment {@code segmentId}'s magnitudes file added. */
  Manifest withMagnitudes(int segmentId, FileRef ref) {
    Map<Integer, FileRef> mags = new TreeMap<>(magnitudes);
    mags.put(segmentId, ref);
    return new Manifest(generation, uuid, layout, nextId, nextSegmentId, segments, tombstones, properties, attachments,
        metaCommit, mags, documented);
  }

  /** A copy with the given changes and generation + 1 (magnitudes kept for the segments that remain). */
  Manifest next(int nextId, int nextSegmentId, List<SegmentEntry> segments, FileRef tombstones,
      Map<String, String> properties, Map<String, FileRef> attachments, String metaCommit) {
    Map<Integer, FileRef> mags = new TreeMap<>();
    for (SegmentEntry s : segments) if (magnitudes.containsKey(s.segmentId())) mags.put(s.segmentId(), magnitudes.get(s.segmentId()));
    return new Manifest(generation + 1, uuid, layout, nextId, nextSegmentId, segments, tombstones, properties,
        attachments, metaCommit, mags, documented);
  }

  /** A copy that also lists ids {@code [first, end)} as documented. */
  Manifest withDocumented(int first, int end) {
    List<IdRange> out = new ArrayList<>(documented);
    IdRange last = out.isEmpty() ? null : out.get(out.size() - 1);
    if (last != null && last.endId() == first) out.set(out.size() - 1, new IdRange(last.firstId(), end));
    else out.add(new IdRange(first, end));
    return new Manifest(generation, uuid, layout, nextId, nextSegmentId, segments, tombstones, properties, attachments,
        metaCommit, magnitudes, out);
  }

  /** The ids that have a metadata document (deleted ones included). */
  org.roaringbitmap.RoaringBitmap documentedIds() {
    org.roaringbitmap.RoaringBitmap b = new org.roaringbitmap.RoaringBitmap();
    for (IdRange r : documented) b.add((long) r.firstId(), (long) r.endId());
    return b;
  }

  public static String fileName(long generation) {
    return "manifest-" + generation;
  }

  /** Every file this generation references (its own manifest excluded). */
  public List<FileRef> files() {
    List<FileRef> out = new ArrayList<>();
    for (SegmentEntry s : segments) {
      out.add(s.codes());
      out.add(s.tables());
    }
    if (tombstones != null) out.add(tombstones);
    out.addAll(attachments.values());
    out.addAll(magnitudes.values());
    return out;
  }

  /** The refusal of {@code dir} when it holds no manifest ({@link #newestGeneration} is -1). */
  static BadInputException noManifest(Path dir) {
    // only a build's create leaves the writer's lock file without a manifest: say what to do about it
    if (Files.exists(dir.resolve(WriteLock.FILE)))
      return new BadInputException("no index in " + dir + ": no manifest-N file beside " + WriteLock.FILE + " (a build there is "
          + "still running, or it was stopped by a kill or power loss before writing its first manifest, or the manifests were "
          + "deleted); remove the folder and build again");
    return new BadInputException("no index in " + dir + ": no manifest-N file (not an index, its manifest was deleted, or a build "
        + "there has not written its first one yet)");
  }

  /** The highest generation whose {@code manifest-N} exists in {@code dir}, or -1. */
  public static long newestGeneration(Path dir) {
    long best = -1;
    try (Stream<Path> files = Files.list(dir)) {
      for (Path p : (Iterable<Path>) files::iterator) {
        Matcher m = NAME.matcher(p.getFileName().toString());
        if (m.matches()) best = Math.max(best, Long.parseLong(m.group(1)));
      }
    } catch (java.nio.file.NoSuchFileException e) {
      throw new BadInputException("index folder " + dir + " does not exist");
    } catch (java.nio.file.NotDirectoryException e) {
      throw new BadInputException("index folder " + dir + " is not a folder");
    } catch (IOException e) {
      throw new UncheckedIOException("cannot list " + dir, e);
    }
    return best;
  }

  /** Reads and checks {@code dir/manifest-N}; refuses an unfinished build ({@link #BUILD_ROWS}). */
  public static Manifest read(Path dir, long generation) {
    Path file = dir.resolve(fileName(generation));
    ChecksummedFile.In in = ChecksummedFile.read(file, CODEC, VERSION_START, VERSION_CURRENT, null, null, null);
    long gen = in.getLong("generation");
    if (gen != generation) throw in.error("generation field is " + gen + ", the file name says " + generation);
    String spec = in.string("layout");
    CodeLayout layout;
    try {
      layout = CodeLayout.parse(spec);
    } catch (IllegalArgumentException e) {
      throw in.error("layout '" + spec + "' is invalid: " + e.getMessage());
    }
    if (layout.hash() != in.header().layoutHash())
      throw in.error("layout '" + spec + "' does not match the header's layout hash");
    int nextId = in.getCount("nextId", Integer.MAX_VALUE);
    int nextSegmentId = in.getCount("nextSegmentId", Integer.MAX_VALUE);
    int nSegs = in.getCount("segment count", nextId);
    List<SegmentEntry> segs = new ArrayList<>(nSegs);
    int prevEnd = 0;
    for (int i = 0; i < nSegs; i++) {
      int segId = in.getCount("segment " + i + " id", Integer.MAX_VALUE);
      int count = in.getInt("segment " + i + " count");
      int first = in.getInt("segment " + i + " firstId");
      int end = in.getInt("segment " + i + " endId");
      if (first < prevEnd || end > nextId || count < 0 || end < first || count > end - first || segId >= nextSegmentId)
        throw in.error("segment " + i + " (id " + segId + ") has an impossible id range [" + first + "," + end
            + ") with " + count + " codes");
      prevEnd = end;
      segs.add(new SegmentEntry(segId, count, first, end, ref(in, "segment " + i + " codes"),
          ref(in, "segment " + i + " tables")));
    }
    byte hasTomb = in.getByte("tombstones flag");
    if (hasTomb != 0 && hasTomb != 1) throw in.error("tombstones flag is " + hasTomb);
    FileRef tomb = hasTomb == 1 ? ref(in, "tombstones") : null;
    int nProps = in.getCount("property count", 1 << 20);
    Map<String, String> props = new LinkedHashMap<>();
    for (int i = 0; i < nProps; i++) props.put(in.string("property " + i + " key"), in.string("property " + i + " value"));
    int nAtt = in.getCount("attachment count", 1 << 20);
    Map<String, FileRef> att = new LinkedHashMap<>();
    for (int i = 0; i < nAtt; i++) att.put(in.string("attachment " + i + " name"), ref(in, "attachment " + i));
    String metaCommit = in.string("metadata commit");
    TreeMap<Integer, FileRef> mags = new TreeMap<>();
    if (in.header().version() >= 2) {
      int nMags = in.getCount("magnitudes count", nSegs);
      for (int i = 0; i < nMags; i++) {
        int segId = in.getInt("magnitudes " + i + " segmentId");
        if (segs.stream().noneMatch(s -> s.segmentId() == segId) || (!mags.isEmpty() && segId <= mags.lastKey()))
          throw in.error("magnitudes " + i + " name segment " + segId + ", which is not listed, repeated or out of order");
        mags.put(segId, ref(in, "magnitudes " + i));
      }
    }
    List<IdRange> documented = new ArrayList<>();
    if (in.header().version() < 3) {
      if (nextId > 0) documented.add(new IdRange(0, nextId));
    } else {
      int nRanges = in.getCount("documented range count", nextId);
      int prev = -1;
      for (int i = 0; i < nRanges; i++) {
        int first = in.getInt("documented range " + i + " firstId"), end = in.getInt("documented range " + i + " endId");
        if (first <= prev || end <= first || end > nextId)
          throw in.error("documented range " + i + " [" + first + "," + end + ") is not ascending inside [0," + nextId + ")");
        documented.add(new IdRange(first, end));
        prev = end;
      }
    }
    in.end();
    Manifest m = new Manifest(gen, in.header().uuid(), layout, nextId, nextSegmentId, segs, tomb, props, att, metaCommit,
        mags, documented);
    m.refuseUnfinished(dir);
    return m;
  }

  private static FileRef ref(ChecksummedFile.In in, String field) {
    String name = in.string(field + " file name");
    long length = in.getLong(field + " file length");
    int crc = in.getInt(field + " file crc");
    try {
      return new FileRef(name, length, crc);
    } catch (IllegalArgumentException e) {
      throw in.error(field + ": " + e.getMessage());
    }
  }

  /** Writes this generation durably: temp file, fsync, atomic rename, fsync of the folder. */
  public void commit(StoreIo io, Path dir) throws IOException {
    Path tmp = dir.resolve(fileName(generation) + ".tmp");
    try (ChecksummedFile.Out out = ChecksummedFile.create(io, tmp, CODEC, VERSION_CURRENT, layout.hash(), uuid)) {
      out.writeLong(generation);
      out.writeString(layout.toString());
      out.writeInt(nextId);
      out.writeInt(nextSegmentId);
      out.writeInt(segments.size());
      for (SegmentEntry s : segments) {
        out.writeInt(s.segmentId());
        out.writeInt(s.count());
        out.writeInt(s.firstId());
        out.writeInt(s.endId());
        writeRef(out, s.codes());
        writeRef(out, s.tables());
      }
      out.writeByte(tombstones == null ? 0 : 1);
      if (tombstones != null) writeRef(out, tombstones);
      out.writeInt(properties.size());
      for (Map.Entry<String, String> e : properties.entrySet()) {
        out.writeString(e.getKey());
        out.writeString(e.getValue());
      }
      out.writeInt(attachments.size());
      for (Map.Entry<String, FileRef> e : attachments.entrySet()) {
        out.writeString(e.getKey());
        writeRef(out, e.getValue());
      }
      out.writeString(metaCommit);
      out.writeInt(magnitudes.size());
      for (Map.Entry<Integer, FileRef> e : magnitudes.entrySet()) {
        out.writeInt(e.getKey());
        writeRef(out, e.getValue());
      }
      out.writeInt(documented.size());
      for (IdRange r : documented) {
        out.writeInt(r.firstId());
        out.writeInt(r.endId());
      }
      out.finish();
    }
    io.move(tmp, dir.resolve(fileName(generation)));
    io.syncDir(dir);
  }

  private static void writeRef(ChecksummedFile.Out out, FileRef r) throws IOException {
    out.writeString(r.name());
    out.writeLong(r.length());
    out.writeInt(r.crc());
  }

}
