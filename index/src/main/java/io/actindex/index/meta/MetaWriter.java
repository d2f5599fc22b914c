package io.actindex.index.meta;

import io.actindex.core.BadInputException;
import io.actindex.index.meta.MetaStore.FieldKind;
import java.io.Closeable;
import java.io.IOException;
import java.nio.file.Path;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.apache.lucene.document.IntPoint;
import org.apache.lucene.index.DirectoryReader;
import org.apache.lucene.index.IndexCommit;
import org.apache.lucene.index.IndexFileNames;
import org.apache.lucene.index.IndexWriter;
import org.apache.lucene.index.IndexWriterConfig;
import org.apache.lucene.index.LeafReaderContext;
import org.apache.lucene.index.NumericDocValues;
import org.apache.lucene.index.PostingsEnum;
import org.apache.lucene.index.SegmentInfos;
import org.apache.lucene.index.Terms;
import org.apache.lucene.index.TermsEnum;
import org.apache.lucene.search.DocIdSetIterator;
import org.apache.lucene.store.Directory;
import org.apache.lucene.store.FSDirectory;
import org.apache.lucene.store.FilterDirectory;
import org.apache.lucene.store.Lock;
import org.apache.lucene.store.LockObtainFailedException;
import org.apache.lucene.util.Bits;
import org.apache.lucene.util.BytesRef;

/**
 * Write side of the metadata store, driven by the index writer: it adds and deletes documents,
 * commits Lucene first, and is told when a manifest has published that commit (only then may the
 * previous commit go). Not thread-safe; one per index writer.
 */
public final class MetaWriter implements Closeable {
  private final Path path;
  private final Directory dir;
  private final KeepPublishedPolicy policy;
  private final IndexWriter writer;
  private Map<String, FieldKind> kinds;
  private DirectoryReader nrt;

  /** A validated batch, ready to add: rows (nullable) for ids firstId.., and the merged column kinds. */
  public record Batch(int firstId, int n, List<Map<String, String>> rows, Map<String, FieldKind> kinds) {
    /** The key of row {@code r}: its "key" column, or "row-ID" when absent or empty. */
    String key(int r) {
      String key = rows == null ? null : rows.get(r).get(MetaSchema.KEY);
      return key == null || key.isEmpty() ? "row-" + (firstId + r) : key;
    }

    /** Row {@code r} with its key filled in. */
    Map<String, String> row(int r) {
      Map<String, String> row = new LinkedHashMap<>();
      row.put(MetaSchema.KEY, key(r));
      if (rows != null)
        for (Map.Entry<String, String> e : rows.get(r).entrySet())
          if (!e.getKey().equals(MetaSchema.KEY)) row.put(e.getKey(), e.getValue());
      return row;
    }
  }

  private MetaWriter(Path path, Directory dir, KeepPublishedPolicy policy, IndexWriter writer,
      Map<String, FieldKind> kinds) throws IOException {
    this.path = path;
    this.dir = dir;
    this.policy = policy;
    this.writer = writer;
    this.kinds = kinds;
    this.nrt = DirectoryReader.open(writer);
  }

  /**
   * How a writer reaches the files of its store; {@link #FILES} opens the folder itself. Its one
   * method is package-private and so is its constructor, so that no public signature names Lucene's
   * directory: the index writer takes one from its {@code StoreIo}, and tests that stand in for the
   * disk wrap one through this package's test sources.
   */
  public abstract static class Opener {
    Opener() {}

    /** The Lucene directory over {@code metaDir} (Lucene makes its own files durable through it). */
    abstract Directory open(Path metaDir) throws IOException;

    public static final Opener FILES = new Opener() {
      @Override
      Directory open(Path metaDir) throws IOException {
        return FSDirectory.open(metaDir);
      }
    };
  }

  /** Creates an empty store in {@code metaDir} (absent or empty) and commits it. */
  public static MetaWriter create(Path metaDir) throws IOException {
    return create(metaDir, Opener.FILES);
  }

  /** As {@link #create(Path)}, reaching the folder through {@code opener}. */
  public static MetaWriter create(Path metaDir, Opener opener) throws IOException {
    Directory dir = opener.open(metaDir);
    try {
      KeepPublishedPolicy policy = new KeepPublishedPolicy();
      IndexWriterConfig cfg = config(policy).setOpenMode(IndexWriterConfig.OpenMode.CREATE);
      MetaWriter w = new MetaWriter(metaDir, dir, policy, new IndexWriter(dir, cfg), new LinkedHashMap<>());
      w.writer.setLiveCommitData(w.userData(w.kinds).entrySet());
      return w;
    } catch (IOException | RuntimeException e) {
      dir.close();
      throw e;
    }
  }

  /**
   * Opens the store at the commit a manifest names ({@code segmentsFile}), dropping every other
   * commit and every file no kept commit references (the leftovers of a failed or crashed change).
   * Other segments files are deleted before Lucene's writer opens, since it reads every one of them
   * and stops at one it cannot parse (junk, a copy, a commit cut short); see {@link #removesLeftover}.
   */
  public static MetaWriter open(Path metaDir, String segmentsFile) throws IOException {
    return open(metaDir, Opener.FILES, segmentsFile, () -> {});
  }

  /**
   * As {@link #open(Path, String)}, reaching the folder through {@code opener}. Lucene's write lock
   * is taken first and held until Lucene's writer has opened: {@code whileLocked} runs once it is
   * held, before anything is read or deleted, so that the caller can make sure that the commit it
   * names is still the newest (no other writer committed before the lock; none can after it).
   */
  public static MetaWriter open(Path metaDir, Opener opener, String segmentsFile, Runnable whileLocked) throws IOException {
    Directory dir = opener.open(metaDir);
    Lock lock = null;
    try {
      try {
        lock = dir.obtainLock(IndexWriter.WRITE_LOCK_NAME);
      } catch (LockObtainFailedException e) {
        // another process's writer holds it only when writer.lock was taken from that writer (removed while held)
        throw new BadInputException("index " + metaDir.getParent() + " is locked by another writer (another process holds its "
            + metaDir.getFileName() + "/" + IndexWriter.WRITE_LOCK_NAME + ", though writer.lock was free: was it removed?); wait "
            + "for that one to end and run this again", e);
      }
      whileLocked.run();
      // Lucene's writer takes the lock held here (and releases it when it closes, or fails to open); the commit must be
      // found through the directory the writer is given
      Directory handing = handingOver(dir, lock);
      IndexCommit commit = MetaStore.findCommit(metaDir, handing, segmentsFile);
      for (String name : dir.listAll())
        if (otherCommit(name, segmentsFile)) dir.deleteFile(name);
      KeepPublishedPolicy policy = new KeepPublishedPolicy();
      policy.publish(commit.getGeneration());
      IndexWriterConfig cfg = config(policy).setOpenMode(IndexWriterConfig.OpenMode.APPEND).setIndexCommit(commit);
      IndexWriter writer = new IndexWriter(handing, cfg);
      lock = null;
      try {
        return new MetaWriter(metaDir, dir, policy, writer, MetaStore.kinds(commit.getUserData()));
      } catch (IOException | RuntimeException e) {
        writer.rollback();
        throw e;
      }
    } catch (IOException | RuntimeException e) {
      if (lock != null) lock.close();
      dir.close();
      throw e;
    }
  }

  /** {@code dir} whose first request of Lucene's write lock gets {@code held}, taken on {@code dir} already. */
  private static Directory handingOver(Directory dir, Lock held) {
    return new FilterDirectory(dir) {
      private Lock pending = held;

      @Override
      public Lock obtainLock(String name) throws IOException {
        if (pending == null || !name.equals(IndexWriter.WRITE_LOCK_NAME)) return super.obtainLock(name);
        Lock l = pending;
        pending = null;
        return l;
      }
    };
  }

  /** Whether {@code name} is a segments file (a commit, or one being written) other than {@code segmentsFile}. */
  static boolean otherCommit(String name, String segmentsFile) {
    return (name.startsWith(IndexFileNames.SEGMENTS) || name.startsWith(IndexFileNames.PENDING_SEGMENTS))
        && !name.equals(segmentsFile);
  }

  /**
   * Whether a writer's {@link #open} removes {@code name}, a file of the store folder that the
   * commit {@code segmentsFile} does not use: other segments files (deleted here) and Lucene's own
   * file names (deleted by Lucene as unreferenced). Other names are left alone.
   */
  public static boolean removesLeftover(String name, String segmentsFile) {
    return otherCommit(name, segmentsFile) || IndexFileNames.CODEC_FILE_PATTERN.matcher(name).matches();
  }

  /**
   * Removes what a failed change left in the store: every commit but the published one ({@code
   * segmentsFile}) and every file no kept commit references. The published commit is not touched;
   * {@code whileLocked} as in {@link #open(Path, Opener, String, Runnable)}.
   */
  public static void dropUnpublished(Path metaDir, Opener opener, String segmentsFile, Runnable whileLocked)
      throws IOException {
    open(metaDir, opener, segmentsFile, whileLocked).close();
  }

  private static IndexWriterConfig config(KeepPublishedPolicy policy) {
    return new IndexWriterConfig().setIndexDeletionPolicy(policy).setCommitOnClose(false);
  }

  private Map<String, String> userData(Map<String, FieldKind> k) {
    Map<String, String> data = new LinkedHashMap<>();
    for (Map.Entry<String, FieldKind> e : k.entrySet())
      data.put(MetaSchema.KIND_PREFIX + e.getKey(), MetaSchema.kindId(e.getValue()));
    return data;
  }

  /**
   * Checks a batch of rows for ids {@code firstId..firstId+n-1} without changing anything: column
   * kinds, and keys unique in the batch and among live documents; a key "row-ID" for an id past the
   * batch is refused (that id's synthesized key once an add without keys reaches it). {@code rows} may be null (keys
   * "row-ID"). Refusals name the row.
   */
  public Batch prepare(int firstId, int n, List<Map<String, String>> rows) throws IOException {
    return prepare(firstId, n, rows, id -> false);
  }

  /**
   * As {@link #prepare(int, int, List)}; {@code bare} tells which ids are live without a document
   * (their synthesized key "row-ID" is taken too).
   */
  public Batch prepare(int firstId, int n, List<Map<String, String>> rows, java.util.function.IntPredicate bare)
      throws IOException {
    if (rows != null && rows.size() != n)
      throw new BadInputException(rows.size() + " metadata rows for " + n + " codes");
    for (int r = 0; rows != null && r < n; r++)
      if (rows.get(r) == null) throw new RowRefusal(r, "missing");
    Batch batch = new Batch(firstId, n, rows, Map.of());
    Map<String, FieldKind> merged = MetaSchema.kinds(kinds, rows == null ? List.of() : rows, firstId);
    Map<String, Integer> seen = new HashMap<>();
    for (int r = 0; r < n; r++) {
      Integer before = seen.put(batch.key(r), r);
      if (before != null)
        throw new RowRefusal(r, "key '" + batch.key(r) + "' already used by row " + before + " of the same batch");
      int synthesized = MetaStore.syntheticId(batch.key(r));
      if (synthesized >= 0 && bare.test(synthesized))
        throw new RowRefusal(r, "key '" + batch.key(r) + "' already exists in the index (id " + synthesized + ")");
      if (synthesized >= firstId + n) // the id's own key once an add without keys reaches it
        throw new RowRefusal(r, "key '" + batch.key(r) + "' names id " + synthesized
            + ", which is not given out yet (a later add without keys would give it this key); rename the key");
    }
    refresh();
    for (LeafReaderContext leaf : nrt.leaves()) {
      Terms terms = leaf.reader().terms(MetaSchema.KEY);
      if (terms == null) continue;
      TermsEnum te = terms.iterator();
      Bits live = leaf.reader().getLiveDocs();
      NumericDocValues ids = null;
      PostingsEnum pe = null;
      for (int r = 0; r < n; r++) {
        if (!te.seekExact(new BytesRef(batch.key(r)))) continue;
        pe = te.postings(pe, PostingsEnum.NONE);
        for (int d = pe.nextDoc(); d != DocIdSetIterator.NO_MORE_DOCS; d = pe.nextDoc()) {
          if (live != null && !live.get(d)) continue;
          ids = leaf.reader().getNumericDocValues(MetaSchema.ID);
          long id = ids != null && ids.advanceExact(d) ? ids.longValue() : -1;
          throw new RowRefusal(r, "key '" + batch.key(r) + "' already exists in the index (id " + id + ")");
        }
      }
    }
    return new Batch(firstId, n, rows, merged);
  }

  private void refresh() throws IOException {
    DirectoryReader fresh = DirectoryReader.openIfChanged(nrt, writer);
    if (fresh != null) {
      nrt.close();
      nrt = fresh;
    }
  }

  /** Adds a prepared batch (not yet committed). */
  public void add(Batch batch) throws IOException {
    for (int r = 0; r < batch.n(); r++)
      writer.addDocument(MetaSchema.document(batch.firstId() + r, batch.row(r), batch.kinds()));
    kinds = batch.kinds();
    writer.setLiveCommitData(userData(kinds).entrySet());
  }

  /** Deletes the documents of {@code ids} (not yet committed). */
  public void delete(int... ids) throws IOException {
    if (ids.length > 0) writer.deleteDocuments(IntPoint.newSetQuery(MetaSchema.ID, ids));
  }

  /** Rewrites segments that hold deleted documents (not yet committed). */
  public void expungeDeletes() throws IOException {
    writer.forceMergeDeletes(true);
  }

  /** Commits Lucene and returns the segments file of the newest commit (the manifest records it). */
  public String commit() throws IOException {
    writer.commit();
    return policy.newest();
  }

  /** Called once a manifest names {@code segmentsFile}: older commits may now be deleted. */
  public void published(String segmentsFile) throws IOException {
    policy.publish(SegmentInfos.generationFromSegmentsFileName(segmentsFile));
    writer.deleteUnusedFiles();
  }

  /** The folder of the store. */
  public Path path() {
    return path;
  }

  /** Closes without committing (uncommitted changes are dropped). */
  @Override
  public void close() throws IOException {
    try {
      nrt.close();
      writer.rollback();
    } finally {
      dir.close();
    }
  }
}
