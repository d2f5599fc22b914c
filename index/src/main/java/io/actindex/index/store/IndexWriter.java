package io.actindex.index.store;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
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
 * the last committed generation on disk and closes the writer.
 *
 * <p>Folder: {@code manifest-N}, {@code seg-S.codes}, {@code seg-S.tables}, {@code tomb-N.bits},
 * {@code att-N.bin}, {@code writer.lock} and the Lucene store in {@code meta/}. Not thread-safe.
 */
public final class IndexWriter implements AutoCloseable {
  static final String META_DIR = "meta";
  private static final Pattern OWN_FILE =
      Pattern.compile("manifest-\\d+(\\.tmp)?|seg-\\d+\\.(codes|tables|mags)|tomb-\\d+\\.bits|att-\\d+\\.bin");

  private final Path dir;
  private WriteLock lock;
  private MetaWriter meta;
  private Manifest manifest;
  private RoaringBitmap deleted;

  private IndexWriter(Path dir, WriteLock lock, MetaWriter meta, Manifest manifest, RoaringBitmap deleted) {
    this.dir = dir;
    this.lock = lock;
    this.meta = meta;
    this.manifest = manifest;
    this.deleted = deleted;
  }

  /** Creates a new index in {@code dir}, which must be absent or empty. */
  public static IndexWriter create(Path dir, CodeLayout layout, Map<String, String> properties) {
    try {
      Files.createDirectories(dir);
      try (Stream<Path> s = Files.list(dir)) {
        if (s.findAny().isPresent()) throw new BadInputException("cannot create an index in " + dir + ": folder is not empty");
      }
      WriteLock lock = WriteLock.acquire(dir);
      MetaWriter meta = null;
      try {
        if (Manifest.newestGeneration(dir) >= 0) throw new BadInputException("an index was created in " + dir + " meanwhile");
        meta = MetaWriter.create(dir.resolve(META_DIR));
        String commit = meta.commit();
        Manifest m = new Manifest(1, UUID.randomUUID(), layout, 0, 0, List.of(), null,
            properties == null ? Map.of() : properties, Map.of(), commit);
        m.commit(dir);
        meta.published(commit);
        return new IndexWriter(dir, lock, meta, m, new RoaringBitmap());
      } catch (IOException | RuntimeException e) {
        if (meta != null) meta.close();
        lock.close();
        throw e;
      }
    } catch (IOException e) {
      throw new UncheckedIOException("cannot create index in " + dir, e);
    }
  }

  /** Opens an existing index for writing; refused if another writer holds the lock. */
  public static IndexWriter open(Path dir) {
    try {
      if (!Files.isDirectory(dir)) throw new BadInputException("index folder " + dir + " does not exist");
      WriteLock lock = WriteLock.acquire(dir);
      MetaWriter meta = null;
      try {
        long gen = Manifest.newestGeneration(dir);
        if (gen < 0) throw new BadInputException("no index in " + dir + ": no manifest-N file");
        Manifest m = Manifest.read(dir, gen);
        RoaringBitmap deleted = Tombstones.read(dir, FileSource.DIRECT, m);
        meta = MetaWriter.open(dir.resolve(META_DIR), m.metaCommit());
        IndexWriter w = new IndexWriter(dir, lock, meta, m, deleted);
        w.deleteUnreferenced();
        return w;
      } catch (IOException | RuntimeException e) {
        if (meta != null) meta.close();
        lock.close();
        throw e;
      }
    } catch (IOException e) {
      throw new UncheckedIOException("cannot open index " + dir + " for writing", e);
    }
  }

  /** The layout every added block must have. */
  public CodeLayout layout() {
    return manifest.layout();
  }

  /** Ids handed out so far. */
  public int maxId() {
    return manifest.nextId();
  }

  /**
   * Adds {@code codes} with one metadata row each (columns "key", "label", "split", "source" and any
   * other; {@code meta} null = keys "row-ID") as a new segment and commits. Returns the first id.
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
    MetaWriter.Batch batch = prepare(first, n, rows);
    mutate(() -> {
      int[] ids = new int[n];
      for (int i = 0; i < n; i++) ids[i] = first + i;
      int segId = manifest.nextSegmentId();
      Manifest.SegmentEntry seg = Segment.write(dir, manifest.uuid(), segId, codes, ids);
      FileRef mags = magnitudes == null ? null
          : Magnitudes.write(dir, manifest.uuid(), manifest.layout().hash(), segId, magnitudes);
      meta.add(batch);
      String commit = meta.commit();
      List<Manifest.SegmentEntry> segs = new ArrayList<>(manifest.segments());
      segs.add(seg);
      Manifest next = manifest.next(end, segId + 1, segs, manifest.tombstones(), manifest.properties(), manifest.attachments(), commit);
      publish(mags == null ? next : next.withMagnitudes(segId, mags));
    });
    return first;
  }

  private MetaWriter.Batch prepare(int first, int n, List<Map<String, String>> rows) {
    try {
      return meta.prepare(first, n, rows);
    } catch (IOException e) {
      fail(e);
      throw new UncheckedIOException(e);
    }
  }

  /** Deletes the given ids (those live) and commits; returns how many were live. */
  public int delete(RoaringBitmap ids) {
    ensureOpen();
    RoaringBitmap fresh = ids.clone();
    if (!fresh.isEmpty()) fresh.remove(Integer.toUnsignedLong(manifest.nextId()), 0x1_0000_0000L);
    fresh.andNot(deleted);
    int count = fresh.getCardinality();
    if (count == 0) return 0;
    mutate(() -> {
      RoaringBitmap all = RoaringBitmap.or(deleted, fresh);
      long gen = manifest.generation() + 1;
      FileRef tomb = Tombstones.write(dir, gen, manifest, manifest.nextId(), all);
      meta.delete(fresh);
      String commit = meta.commit();
      publish(manifest.next(manifest.nextId(), manifest.nextSegmentId(), manifest.segments(), tomb,
          manifest.properties(), manifest.attachments(), commit));
      deleted = all;
    });
    return count;
  }

  /** Merges all segments into one without deleted codes; ids stay as they are. */
  public void compact() {
    ensureOpen();
    mutate(() -> {
      List<Segment> segs = new ArrayList<>();
      int live = 0, stored = 0;
      for (Manifest.SegmentEntry e : manifest.segments()) {
        Segment s = Segment.read(dir, FileSource.DIRECT, manifest, e);
        segs.add(s);
        stored += s.size();
        for (int o = 0; o < s.size(); o++) if (!deleted.contains(s.id(o))) live++;
      }
      if (segs.size() <= 1 && live == stored) return;
      int w = manifest.layout().words();
      long[] words = new long[Math.multiplyExact(live, w)];
      int[] ids = new int[live];
      int i = 0;
      for (Segment s : segs)
        for (int o = 0; o < s.size(); o++) {
          int id = s.id(o);
          if (deleted.contains(id)) continue;
          System.arraycopy(s.codes().words(), o * w, words, i * w, w);
          ids[i++] = id;
        }
      List<Manifest.SegmentEntry> out = new ArrayList<>();
      int segId = manifest.nextSegmentId();
      if (live > 0) out.add(Segment.write(dir, manifest.uuid(), segId, new CodeBlock(manifest.layout(), live, words), ids));
      Magnitudes mags = live > 0 ? liveMagnitudes(segs) : null;
      FileRef magsRef = mags == null ? null : Magnitudes.write(dir, manifest.uuid(), manifest.layout().hash(), segId, mags);
      meta.expungeDeletes();
      String commit = meta.commit();
      Manifest next = manifest.next(manifest.nextId(), segId + 1, out, manifest.tombstones(), manifest.properties(),
          manifest.attachments(), commit);
      publish(magsRef == null ? next : next.withMagnitudes(segId, magsRef));
    });
  }

  /** The live rows' magnitudes of {@code segs} in id order, or null unless every segment keeps them. */
  private Magnitudes liveMagnitudes(List<Segment> segs) {
    List<Magnitudes> parts = new ArrayList<>();
    List<int[]> ords = new ArrayList<>();
    for (int p = 0; p < segs.size(); p++) {
      Manifest.SegmentEntry e = manifest.segments().get(p);
      FileRef ref = manifest.magnitudes().get(e.segmentId());
      if (ref == null) return null;
      parts.add(Magnitudes.read(dir, FileSource.DIRECT, manifest, e, ref));
      Segment s = segs.get(p);
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
      FileRef ref = Attachments.write(dir, manifest.generation() + 1, manifest, name, content);
      Map<String, FileRef> att = new LinkedHashMap<>(manifest.attachments());
      att.put(name, ref);
      publish(manifest.next(manifest.nextId(), manifest.nextSegmentId(), manifest.segments(), manifest.tombstones(),
          manifest.properties(), att, manifest.metaCommit()));
    });
  }

  private interface Mutation {
    void run() throws IOException;
  }

  /** Runs a change after validation; any failure closes the writer (disk keeps the last commit). */
  private void mutate(Mutation m) {
    try {
      m.run();
    } catch (IOException e) {
      fail(e);
      throw new UncheckedIOException("index " + dir + ": write failed; the last commit stands", e);
    } catch (RuntimeException | Error e) {
      fail(e);
      throw e;
    }
  }

  private void fail(Throwable cause) {
    try {
      close();
    } catch (RuntimeException e) {
      cause.addSuppressed(e);
    }
  }

  private void publish(Manifest next) throws IOException {
    next.commit(dir);
    manifest = next;
    meta.published(next.metaCommit());
    deleteUnreferenced();
  }

  /** Deletes our files that the current manifest does not name (old generations, crash leftovers). */
  private void deleteUnreferenced() throws IOException {
    Set<String> keep = new HashSet<>();
    keep.add(Manifest.fileName(manifest.generation()));
    for (FileRef f : manifest.files()) keep.add(f.name());
    try (Stream<Path> files = Files.list(dir)) {
      for (Path p : (Iterable<Path>) files::iterator) {
        String name = p.getFileName().toString();
        if (OWN_FILE.matcher(name).matches() && !keep.contains(name)) Files.deleteIfExists(p);
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
        meta.close();
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
