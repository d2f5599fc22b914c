package io.actindex.index.store;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.DiskFull;
import io.actindex.core.OutputFiles;
import io.actindex.index.mih.SearchPlanOptions;
import io.actindex.index.mih.SelfJoin;
import io.actindex.index.meta.MetaWriter;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.UUID;
import java.util.regex.Pattern;
import java.util.stream.Stream;
import org.roaringbitmap.RoaringBitmap;

/**
 * The only way to change an index folder. Holds the folder's write lock from open to close. Every
 * mutating call commits before it returns: new files are written and fsynced, the metadata store
 * (Lucene) commits, then a new manifest generation is renamed into place. Refused input
 * ({@link BadInputException}) changes nothing and the writer stays usable; any other failure leaves
 * the last committed generation on disk and closes the writer. A full disk ({@link DiskFull}) is
 * such a failure, reported as a {@link BadInputException} naming the folder.
 *
 * <p>Folder: {@code manifest-N}, {@code seg-S.codes}, {@code seg-S.tables}, {@code tomb-N.bits},
 * {@code att-N.bin}, {@code writer.lock} and the Lucene store in {@code meta/}. Not thread-safe.
 */
public final class IndexWriter implements AutoCloseable {
  static final String META_DIR = "meta";
  private static final Pattern OWN_FILE =
      Pattern.compile("manifest-\\d+(\\.tmp)?|seg-\\d+\\.(codes|tables|mags)|tomb-\\d+\\.bits|att-\\d+\\.bin");

  private final Path dir;
  private final StoreIo io;
  private MergePolicy policy = MergePolicy.defaults();
  private SearchPlanOptions searchPlan = SearchPlanOptions.defaults();
  private final List<String> warnings = new ArrayList<>();
  private WriteLock lock;
  private MetaWriter meta;
  private Manifest manifest;
  private RoaringBitmap deleted;

  private IndexWriter(Path dir, StoreIo io, WriteLock lock, MetaWriter meta, Manifest manifest, RoaringBitmap deleted) {
    this.dir = dir;
    this.io = io;
    this.lock = lock;
    this.meta = meta;
    this.manifest = manifest;
    this.deleted = deleted;
  }

  /** Creates a new index in {@code dir}, which must be absent or empty. */
  public static IndexWriter create(Path dir, CodeLayout layout, Map<String, String> properties) {
    return create(dir, layout, properties, StoreIo.REAL);
  }

  /** As {@link #create(Path, CodeLayout, Map)}, writing through {@code io}. */
  public static IndexWriter create(Path dir, CodeLayout layout, Map<String, String> properties, StoreIo io) {
    try {
      for (Path p = dir.toAbsolutePath(); p != null; p = p.getParent())
        if (Files.exists(p) && !Files.isDirectory(p))
          throw new BadInputException("cannot create an index in " + dir + ": " + p + " exists and is not a folder");
      OutputFiles.checkIndexPlace(dir, "the new index");
      Files.createDirectories(dir);
      try (Stream<Path> s = Files.list(dir)) {
        if (s.findAny().isPresent()) throw new BadInputException("cannot create an index in " + dir + ": folder is not empty");
      }
      WriteLock lock = WriteLock.acquire(dir);
      MetaWriter meta = null;
      try {
        if (Manifest.newestGeneration(dir) >= 0) throw new BadInputException("an index was created in " + dir + " meanwhile");
        Files.createDirectories(dir.resolve(META_DIR));
        io.syncDir(dir);
        meta = MetaWriter.create(dir.resolve(META_DIR), io.meta());
        String commit = meta.commit();
        Manifest m = new Manifest(1, UUID.randomUUID(), layout, 0, 0, List.of(), null,
            properties == null ? Map.of() : properties, Map.of(), commit, Map.of(), List.of());
        m.commit(io, dir);
        meta.published(commit);
        return new IndexWriter(dir, io, lock, meta, m, new RoaringBitmap());
      } catch (IOException | RuntimeException e) {
        if (meta != null) meta.close();
        lock.close();
        throw e;
      }
    } catch (IOException | RuntimeException e) {
      if (DiskFull.in(e, dir)) throw DiskFull.refusal("index " + dir, "the index was not created", e);
      if (e instanceof IOException io2) throw new UncheckedIOException("cannot create index in " + dir, io2);
      throw (RuntimeException) e;
    }
  }

  /** Whether a writer's open deletes {@code name}, a file of the index folder the current manifest does not name. */
  static boolean removesLeftover(String name) {
    return OWN_FILE.matcher(name).matches();
  }

  /** Opens an existing index for writing; refused if another writer holds the lock. */
  public static IndexWriter open(Path dir) {
    return open(dir, StoreIo.REAL);
  }

  /** As {@link #open(Path)}, writing through {@code io}. */
  public static IndexWriter open(Path dir, StoreIo io) {
    try {
      if (!Files.isDirectory(dir)) throw new BadInputException("index folder " + dir + " does not exist or is not a folder");
      WriteLock lock = WriteLock.acquire(dir);
      MetaWriter meta = null;
      try {
        long gen = Manifest.newestGeneration(dir);
        if (gen < 0) throw Manifest.noManifest(dir);
        Manifest m = Manifest.read(dir, gen);
        RoaringBitmap deleted = Tombstones.read(dir, FileSource.DIRECT, m, ChecksummedFile.Check.OPEN);
        Path metaDir = dir.resolve(META_DIR);
        if (!Files.isDirectory(metaDir)) throw new BadInputException("metadata folder " + metaDir + " is missing");
        io.syncDir(dir); // the manifest read is durable before anything it does not name is deleted (a writer killed before its folder fsync)
        // checked under Lucene's lock on the metadata store, which no other writer can then open: else what the manifest
        // read does not name may be another writer's commit
        meta = MetaWriter.open(metaDir, io.meta(), m.metaCommit(), () -> ensureCurrent(lock, dir, gen));
        IndexWriter w = new IndexWriter(dir, io, lock, meta, m, deleted);
        w.cleanUp();
        return w;
      } catch (IOException | RuntimeException e) {
        // with writer.lock taken from this writer, the failure (say, Lucene's lock held) may come from another writer
        RuntimeException lost = lock.held() ? null : lock.lost(e);
        if (meta != null) meta.close();
        lock.close();
        if (lost != null) throw lost;
        throw e;
      }
    } catch (IOException e) {
      throw new UncheckedIOException("cannot open index " + dir + " for writing", e);
    }
  }

  /** Replaces the merge policy (segment size cap and merge factor). */
  public IndexWriter mergePolicy(MergePolicy p) {
    this.policy = java.util.Objects.requireNonNull(p);
    return this;
  }

  /**
   * Replaces the plan of the search structures built for new segments (adds, merges, compaction);
   * default {@link SearchPlanOptions#defaults()}. Every plan answers exactly; tests of very large
   * segments use a cheap one.
   */
  public IndexWriter searchPlan(SearchPlanOptions p) {
    this.searchPlan = java.util.Objects.requireNonNull(p);
    return this;
  }

  /** The layout every added block must have. */
  public CodeLayout layout() {
    return manifest.layout();
  }

  /** Ids handed out so far. */
  public int maxId() {
    return manifest.nextId();
  }

  /** Segments of the last commit. */
  public int segmentCount() {
    return manifest.segments().size();
  }

  /**
   * Problems that did not undo a commit (old files that could not be deleted after a new manifest
   * was published, the next writer deletes them; a merge that failed after an add's or a delete's commit).
   * Cleared by reading.
   */
  public List<String> takeWarnings() {
    List<String> out = List.copyOf(warnings);
    warnings.clear();
    return out;
  }

  /**
   * Adds {@code codes} with one metadata row each (columns "key", "label", "split", "source" and any
   * other; {@code rows} null = no metadata: keys "row-ID" are synthesized, no document is stored)
   * and commits, as one segment or, past the size cap, several. Then merges segments as the merge
   * policy asks (each merge its own commit). Returns the first id. A merge that fails after the
   * add's commit is a warning ({@link #takeWarnings()}), not an error, since the add stands; like
   * every failure it closes the writer.
   */
  public int add(CodeBlock codes, List<Map<String, String>> rows) {
    return add(codes, null, rows);
  }

  /**
   * As {@link #add(CodeBlock, List)}, keeping {@code magnitudes} (one row per code, one unit per
   * code bit; null = none) in the segment's {@link Magnitudes} file, committed with the codes.
   */
  public int add(CodeBlock codes, Magnitudes magnitudes, List<Map<String, String>> rows) {
    ensureOpen();
    if (magnitudes != null && (magnitudes.count() != codes.size() || magnitudes.units() != manifest.layout().bits()))
      throw new IllegalArgumentException(magnitudes.count() + " magnitude rows of " + magnitudes.units() + " units for "
          + codes.size() + " codes of " + manifest.layout().bits() + " bits");
    if (!codes.layout().equals(manifest.layout()))
      throw new BadInputException("codes have layout " + codes.layout() + ", the index " + dir + " has " + manifest.layout());
    int n = codes.size();
    int first = manifest.nextId();
    int end;
    try {
      end = Math.addExact(first, n);
    } catch (ArithmeticException e) {
      throw new BadInputException("index " + dir + " cannot hold " + n + " more codes (ids would pass " + Integer.MAX_VALUE + ")");
    }
    if (rows != null && rows.size() != n) throw new BadInputException(rows.size() + " metadata rows for " + n + " codes");
    if (n == 0) return first;
    MetaWriter.Batch batch = rows == null ? null : prepare(first, n, rows);
    mutate(() -> {
      List<Manifest.SegmentEntry> segs = new ArrayList<>(manifest.segments());
      Map<Integer, FileRef> mags = new LinkedHashMap<>();
      int segId = manifest.nextSegmentId(), at = 0;
      for (int len : policy.split(n, codes.wordsPerCode())) {
        int[] ids = new int[len];
        for (int i = 0; i < len; i++) ids[i] = first + at + i;
        CodeBlock piece = at == 0 && len == n ? codes : codes.slice(at, at + len);
        segs.add(Segment.write(io, dir, manifest.uuid(), segId, piece, ids, searchPlan));
        if (magnitudes != null)
          mags.put(segId, Magnitudes.write(io, dir, manifest.uuid(), manifest.layout().hash(), segId,
              len == n ? magnitudes : rows(magnitudes, at, len)));
        segId++;
        at += len;
      }
      String commit = manifest.metaCommit();
      if (batch != null) {
        meta.add(batch);
        commit = meta.commit();
      }
      Manifest next = manifest.next(end, segId, segs, manifest.tombstones(), manifest.properties(), manifest.attachments(),
          commit);
      for (Map.Entry<Integer, FileRef> e : mags.entrySet()) next = next.withMagnitudes(e.getKey(), e.getValue());
      publish(batch == null ? next : next.withDocumented(first, end));
    });
    mergeAsNeeded("the add is committed (ids " + first + ".." + (end - 1) + ")");
    return first;
  }

  /** Ids that are live and have no metadata document (their key is "row-ID"). */
  private java.util.function.IntPredicate bare() {
    RoaringBitmap documented = manifest.documentedIds();
    int max = manifest.nextId();
    return id -> id >= 0 && id < max && !documented.contains(id) && !deleted.contains(id);
  }

  private MetaWriter.Batch prepare(int first, int n, List<Map<String, String>> rows) {
    try {
      return meta.prepare(first, n, rows, bare());
    } catch (IOException e) {
      fail(e);
      throw new UncheckedIOException(e);
    }
  }

  /**
   * Deletes the given ids (any order; repeats, ids never given out and ids deleted already are
   * ignored) and commits; returns how many were live. Then merges segments as the merge policy asks
   * (each merge its own commit), which rewrites a segment left with too many deleted codes ({@link
   * MergePolicy#maxDeletedShare}); a merge that fails after the delete's commit is a warning
   * ({@link #takeWarnings()}), as after {@link #add}.
   */
  public int delete(int... ids) {
    ensureOpen();
    RoaringBitmap fresh = RoaringBitmap.bitmapOf(ids);
    if (!fresh.isEmpty()) fresh.remove(Integer.toUnsignedLong(manifest.nextId()), 0x1_0000_0000L);
    fresh.andNot(deleted);
    int count = fresh.getCardinality();
    if (count == 0) return 0;
    mutate(() -> {
      RoaringBitmap all = RoaringBitmap.or(deleted, fresh);
      long gen = manifest.generation() + 1;
      FileRef tomb = Tombstones.write(io, dir, gen, manifest, manifest.nextId(), all);
      RoaringBitmap documented = RoaringBitmap.and(fresh, manifest.documentedIds());
      String commit = manifest.metaCommit();
      if (!documented.isEmpty()) {
        meta.delete(documented.toArray());
        commit = meta.commit();
      }
      publish(manifest.next(manifest.nextId(), manifest.nextSegmentId(), manifest.segments(), tomb,
          manifest.properties(), manifest.attachments(), commit));
      deleted = all;
    });
    mergeAsNeeded("the delete is committed (" + count + (count == 1 ? " id)" : " ids)"));
    return count;
  }

  /**
   * Rewrites every segment without its deleted codes, merged into as few segments as the size cap
   * allows; ids stay as they are. Every byte read is CRC-checked first.
   */
  public void compact() {
    compact(null);
  }

  /**
   * As {@link #compact()}, telling {@code progress} (null: nobody) the codes read (every stored one,
   * checked) then written (the live ones) of both counts together, a segment at a time.
   */
  public void compact(SelfJoin.Progress progress) {
    ensureOpen();
    List<Manifest.SegmentEntry> all = manifest.segments();
    boolean clean = all.size() <= 1 && all.stream().allMatch(e -> live(e) == e.count());
    if (clean) return;
    mutate(() -> {
      Manifest m = merge(manifest, 0, all.size(), progress);
      meta.expungeDeletes();
      String commit = meta.commit();
      publish(m.next(m.nextId(), m.nextSegmentId(), m.segments(), m.tombstones(), m.properties(), m.attachments(), commit));
    });
  }

  /**
   * Runs the merges the merge policy asks for after a committed change ({@code committed} says
   * which, for the warning), each its own commit. A merge that fails is a warning, not an error: the
   * change stands, and an error would invite making it again (adding the rows twice).
   */
  private void mergeAsNeeded(String committed) {
    try {
      int w = manifest.layout().words();
      while (true) {
        List<Long> live = new ArrayList<>(), stored = new ArrayList<>();
        for (Manifest.SegmentEntry e : manifest.segments()) {
          live.add((long) live(e));
          stored.add((long) e.count());
        }
        int[] window = policy.next(live, stored, w);
        if (window == null) return;
        mutate(() -> {
          Manifest m = merge(manifest, window[0], window[1], null);
          publish(m.next(m.nextId(), m.nextSegmentId(), m.segments(), m.tombstones(), m.properties(), m.attachments(),
              m.metaCommit()));
        });
      }
    } catch (RuntimeException | OutOfMemoryError e) {
      warnings.add("index " + dir + ": " + committed
          + "; a merge of segments that followed failed, which leaves more segments than usual and loses nothing: "
          + e.getMessage());
    }
  }

  private int live(Manifest.SegmentEntry e) {
    return (int) (e.endId() - e.firstId() - deleted.rangeCardinality(e.firstId(), e.endId()));
  }

  /**
   * Writes the live codes of segments {@code [from, to)} as new segments (at most the cap each)
   * and returns the manifest entries in their place (same generation: the caller publishes). Reads
   * with the full check, so a merge never copies damaged bytes into a new file. {@code progress}
   * (null: none) is told the codes read then written, of both counts together.
   */
  private Manifest merge(Manifest m, int from, int to, SelfJoin.Progress progress) throws IOException {
    int w = m.layout().words(), total = 0;
    List<Segment> segs = new ArrayList<>();
    List<Path> files = new ArrayList<>();
    long steps = 0, done = 0;
    for (Manifest.SegmentEntry e : m.segments().subList(from, to)) {
      files.add(dir.resolve(e.codes().name()));
      files.add(dir.resolve(e.tables().name()));
      steps += e.count() + live(e);
    }
    if (progress != null) progress.update(0, steps);
    try (FileSource.Pinned src = FileSource.pin(files)) { // unmapped right after: the codes are copied
      for (Manifest.SegmentEntry e : m.segments().subList(from, to)) {
        segs.add(Segment.read(dir, src, m, e, ChecksummedFile.Check.FULL));
        total += live(e);
        done += e.count();
        if (progress != null) progress.update(done, steps);
      }
    }
    List<Manifest.SegmentEntry> out = new ArrayList<>(m.segments().subList(0, from));
    Map<Integer, FileRef> mags = new java.util.TreeMap<>(m.magnitudes());
    for (Manifest.SegmentEntry e : m.segments().subList(from, to)) mags.remove(e.segmentId());
    Magnitudes kept = total == 0 ? null : liveMagnitudes(m, from, to, segs);
    int segId = m.nextSegmentId(), si = 0, so = 0, at = 0;
    for (int len : total == 0 ? List.<Integer>of() : policy.split(total, w)) {
      long[] words = new long[Math.multiplyExact(len, w)];
      int[] ids = new int[len];
      int i = 0;
      while (i < len) {
        Segment s = segs.get(si);
        if (so == s.size()) {
          si++;
          so = 0;
          continue;
        }
        int id = s.id(so);
        if (!deleted.contains(id)) {
          System.arraycopy(s.codes().words(), so * w, words, i * w, w);
          ids[i++] = id;
        }
        so++;
      }
      out.add(Segment.write(io, dir, m.uuid(), segId, new CodeBlock(m.layout(), len, words), ids, searchPlan));
      if (kept != null)
        mags.put(segId, Magnitudes.write(io, dir, m.uuid(), m.layout().hash(), segId,
            len == total ? kept : rows(kept, at, len)));
      segId++;
      at += len;
      done += len;
      if (progress != null) progress.update(done, steps);
    }
    out.addAll(m.segments().subList(to, m.segments().size()));
    return new Manifest(m.generation(), m.uuid(), m.layout(), m.nextId(), segId, out, m.tombstones(), m.properties(),
        m.attachments(), m.metaCommit(), mags, m.documented());
  }

  /** Rows {@code [from, from + len)} of {@code m}. */
  private static Magnitudes rows(Magnitudes m, int from, int len) {
    return Magnitudes.merge(List.of(m), List.of(java.util.stream.IntStream.range(from, from + len).toArray()));
  }

  /** The live rows' magnitudes of segments {@code [from, to)} in id order, or null unless every one keeps them. */
  private Magnitudes liveMagnitudes(Manifest m, int from, int to, List<Segment> segs) {
    List<Magnitudes> parts = new ArrayList<>();
    List<int[]> ords = new ArrayList<>();
    for (int p = from; p < to; p++) {
      Manifest.SegmentEntry e = m.segments().get(p);
      FileRef ref = m.magnitudes().get(e.segmentId());
      if (ref == null) return null;
      parts.add(Magnitudes.read(dir, FileSource.DIRECT, m, e, ref, ChecksummedFile.Check.FULL));
      Segment s = segs.get(p - from);
      ords.add(java.util.stream.IntStream.range(0, s.size()).filter(o -> !deleted.contains(s.id(o))).toArray());
    }
    return parts.isEmpty() ? null : Magnitudes.merge(parts, ords);
  }

  /** Adds or replaces properties and commits. */
  public void putProperties(Map<String, String> props) {
    ensureOpen();
    Map<String, String> merged = new LinkedHashMap<>(manifest.properties());
    merged.putAll(props);
    mutate(() -> publish(manifest.next(manifest.nextId(), manifest.nextSegmentId(), manifest.segments(),
        manifest.tombstones(), merged, manifest.attachments(), manifest.metaCommit())));
  }

  /** Stores (or replaces) a named blob in its own checksummed file and commits. */
  public void putAttachment(String name, byte[] content) {
    ensureOpen();
    if (name == null || name.isEmpty() || name.length() > 1000) throw new BadInputException("attachment name '" + name + "' is empty or too long");
    mutate(() -> {
      FileRef ref = Attachments.write(io, dir, manifest.generation() + 1, manifest, name, content);
      Map<String, FileRef> att = new LinkedHashMap<>(manifest.attachments());
      att.put(name, ref);
      publish(manifest.next(manifest.nextId(), manifest.nextSegmentId(), manifest.segments(), manifest.tombstones(),
          manifest.properties(), att, manifest.metaCommit()));
    });
  }

  private interface Mutation {
    void run() throws IOException;
  }

  /**
   * Runs a change after validation; any failure closes the writer (disk keeps the last commit) and
   * removes the files the change wrote, unless its manifest may already be on disk.
   */
  private void mutate(Mutation m) {
    try {
      ensureCurrent(lock, dir, manifest.generation());
      m.run();
    } catch (IOException e) {
      boolean full = DiskFull.in(e, dir); // before fail() frees what the change wrote
      RuntimeException lost = lost(e);
      boolean undone = fail(e);
      if (lost != null) throw lost;
      if (full) throw diskFull(e, undone);
      throw new UncheckedIOException("index " + dir + ": write failed; the last commit stands", e);
    } catch (RuntimeException | Error e) {
      boolean full = DiskFull.in(e, dir);
      RuntimeException lost = lost(e);
      boolean undone = fail(e);
      if (lost != null) throw lost;
      if (full) throw diskFull(e, undone);
      throw e;
    }
  }

  /** The refusal to report when the lock file was taken from this writer (the failure may come from another writer's work), else null. */
  private RuntimeException lost(Throwable e) {
    return lock.held() ? null : lock.lost(e);
  }

  /** A full disk (exit code 2, naming the folder), saying whether the change was undone or had been published. */
  private BadInputException diskFull(Throwable e, boolean undone) {
    return DiskFull.refusal("index " + dir, undone ? "the change was not made, the index is as it was"
        : "the change was published before the failure (the index holds it)", e);
  }

  /** Undoes a failed change where its manifest is not on disk; true when undone (the last commit stands). */
  private boolean fail(Throwable cause) {
    boolean undone = false;
    try {
      // with the lock file taken from this writer, files no manifest names may be another writer's work: kept
      undone = lock.held() && newestOnDisk() == manifest.generation();
      if (undone) deleteUnreferenced();
    } catch (IOException | RuntimeException e) {
      cause.addSuppressed(e);
    }
    try {
      MetaWriter m = meta;
      meta = null;
      if (m != null) m.close();
    } catch (IOException | RuntimeException e) {
      cause.addSuppressed(e);
    }
    if (undone) { // Lucene's files of the failed change (a commit no manifest names, a half-written flush), under our lock
      try {
        Path metaDir = dir.resolve(META_DIR);
        MetaWriter.dropUnpublished(metaDir, io.meta(), manifest.metaCommit(),
            () -> ensureCurrent(lock, dir, manifest.generation()));
      } catch (IOException | RuntimeException e) {
        cause.addSuppressed(e);
      }
    }
    try {
      close();
    } catch (RuntimeException e) {
      cause.addSuppressed(e);
    }
    return undone;
  }

  /**
   * Refuses to go on unless this writer still holds {@code writer.lock} (not removed or replaced
   * while held) and generation {@code gen} is the newest on disk: otherwise another writer may have
   * committed, and what this writer's manifest does not name may be that writer's files. Checked
   * before each step that deletes or commits.
   */
  private static void ensureCurrent(WriteLock lock, Path dir, long gen) {
    lock.ensureHeld();
    if (Manifest.newestGeneration(dir) != gen) throw lock.lost(null);
  }

  private long newestOnDisk() {
    return Manifest.newestGeneration(dir);
  }

  /**
   * Publishes {@code next}. Once its manifest is renamed into place the commit stands: a failure
   * to make that durable still fails the call, but a failure to delete the old files afterwards
   * is only a warning ({@link #takeWarnings()}).
   */
  private void publish(Manifest next) throws IOException {
    ensureCurrent(lock, dir, manifest.generation());
    next.commit(io, dir);
    manifest = next;
    cleanUp();
  }

  private void cleanUp() {
    try {
      meta.published(manifest.metaCommit());
      deleteUnreferenced();
    } catch (IOException | RuntimeException e) {
      warnings.add("index " + dir + ": committed generation " + manifest.generation()
          + ", but old files could not be deleted (the next change retries): " + e.getMessage());
    }
  }

  /** Deletes our files that the current manifest does not name (old generations, crash leftovers). */
  private void deleteUnreferenced() throws IOException {
    ensureCurrent(lock, dir, manifest.generation());
    Set<String> keep = new HashSet<>();
    keep.add(Manifest.fileName(manifest.generation()));
    for (FileRef f : manifest.files()) keep.add(f.name());
    try (Stream<Path> files = Files.list(dir)) {
      for (Path p : (Iterable<Path>) files::iterator) {
        String name = p.getFileName().toString();
        if (OWN_FILE.matcher(name).matches() && !keep.contains(name)) io.delete(p);
      }
    }
  }

  private void ensureOpen() {
    if (lock == null) throw new IllegalStateException("index writer for " + dir + " is closed");
  }

  /** Releases the lock; uncommitted work does not exist (every call commits). */
  @Override
  public void close() {
    if (lock == null) return;
    try {
      try {
        if (meta != null) meta.close();
      } finally {
        lock.close();
      }
    } catch (IOException e) {
      throw new UncheckedIOException("closing index writer for " + dir, e);
    } finally {
      lock = null;
      meta = null;
    }
  }
}
