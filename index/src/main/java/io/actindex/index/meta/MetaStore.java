package io.actindex.index.meta;

import io.actindex.core.BadInputException;
import io.actindex.core.IdSet;
import java.io.Closeable;
import java.io.FileNotFoundException;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.ByteBuffer;
import java.nio.channels.FileChannel;
import java.nio.file.Files;
import java.nio.file.NoSuchFileException;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.util.ArrayList;
import java.util.Collections;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import java.util.zip.CRC32;
import org.apache.lucene.codecs.CodecUtil;
import org.apache.lucene.index.CorruptIndexException;
import org.apache.lucene.index.DirectoryReader;
import org.apache.lucene.index.IndexCommit;
import org.apache.lucene.index.IndexableField;
import org.apache.lucene.index.LeafReaderContext;
import org.apache.lucene.index.NumericDocValues;
import org.apache.lucene.index.PostingsEnum;
import org.apache.lucene.index.Term;
import org.apache.lucene.index.Terms;
import org.apache.lucene.index.TermsEnum;
import org.apache.lucene.search.CollectorManager;
import org.apache.lucene.search.DocIdSetIterator;
import org.apache.lucene.search.FieldExistsQuery;
import org.apache.lucene.search.IndexSearcher;
import org.apache.lucene.search.MatchAllDocsQuery;
import org.apache.lucene.search.Query;
import org.apache.lucene.search.RegexpQuery;
import org.apache.lucene.search.ScoreMode;
import org.apache.lucene.search.SimpleCollector;
import org.apache.lucene.search.TermQuery;
import org.apache.lucene.store.Directory;
import org.apache.lucene.store.FSDirectory;
import org.apache.lucene.store.IOContext;
import org.apache.lucene.store.IndexInput;
import org.apache.lucene.util.Bits;
import org.apache.lucene.util.BytesRef;
import org.apache.lucene.util.IOUtils;
import org.roaringbitmap.RoaringBitmap;

/**
 * Read side of the metadata store: a Lucene index (subfolder {@code meta}) opened at the commit the
 * manifest names, after every file of that commit passed Lucene's checksum. One document per live
 * code; see {@link MetaSchema} for fields. Filters: {@link Where#select} turns a where-expression
 * into the {@code IdSet} of live ids it matches, {@link #selectHaving} and {@link #selectEqual} pick
 * the rows with a value in a column or with one exact text. Inside, each is a Lucene query that
 * {@link #select} runs; Lucene and RoaringBitmap stay implementation details (no public method takes
 * or returns their types). Thread-safe.
 *
 * <p>Ids added without metadata have no document ("bare" ids): their row is only the key
 * {@code row-ID}, synthesized here, so a build without metadata writes nothing per example. {@link
 * #select} answers for them by running the query over a small in-memory index: one document with no
 * fields for every bare id whose key the query does not name, and one per bare id it names.
 */
public final class MetaStore implements Closeable {

  /** How a column is indexed. */
  public enum FieldKind { KEYWORD, NUMBER }

  /** Whether {@code text} is a value a NUMBER field holds exactly (a finite decimal, no more digits than a double keeps). */
  public static boolean exactNumber(String text) {
    return MetaSchema.isNumber(text);
  }

  /** Whether a metadata column may not have this name ("id", and names the store keeps for itself). */
  public static boolean reservedColumn(String name) {
    return name.equals(MetaSchema.ID) || name.startsWith(MetaSchema.KIND_PREFIX);
  }

  /** Lucene's lock file in the store folder (empty; not part of any commit). */
  public static final String LOCK_FILE = org.apache.lucene.index.IndexWriter.WRITE_LOCK_NAME;

  private final Directory dir;
  private final DirectoryReader reader;
  private final IndexSearcher searcher;
  private final Map<String, FieldKind> fields;
  private final RoaringBitmap deleted;
  private final RoaringBitmap bare;
  private final int maxId; // ids are [0, maxId)
  private volatile int[] docOfId;
  private static final java.util.regex.Pattern SYNTHETIC = java.util.regex.Pattern.compile("row-(0|[1-9]\\d{0,9})");

  private MetaStore(Directory dir, DirectoryReader reader, Map<String, FieldKind> fields, RoaringBitmap deleted,
      RoaringBitmap bare, int maxId) {
    this.bare = bare;
    this.maxId = maxId;
    this.dir = dir;
    this.reader = reader;
    this.searcher = new IndexSearcher(reader);
    this.searcher.setQueryCache(null);
    this.fields = fields;
    this.deleted = deleted;
  }

  /**
   * Opens the commit {@code segmentsFile} of the store in {@code metaDir} (for {@link
   * io.actindex.index.store.IndexReader}, which passes its manifest's sets, both over {@code [0,
   * maxId)}); ids that are neither in {@code documented} nor in {@code deleted} are bare (key
   * "row-ID", no document), {@code deleted} ids are never selected. Every file's checksum is
   * recomputed ({@link #checksumByReading}); BadInputException names a damaged file.
   */
  public static MetaStore open(Path metaDir, String segmentsFile, IdSet deleted, IdSet documented, int maxId) {
    if (deleted.size() != maxId || documented.size() != maxId)
      throw new IllegalArgumentException("sets over " + deleted.size() + " and " + documented.size() + " ids, not " + maxId);
    if (!Files.isDirectory(metaDir))
      throw noFolder(metaDir, " (readers never create it)");
    RoaringBitmap bare = bitmap(IdSet.all(maxId).andNot(documented).andNot(deleted));
    Directory dir = null;
    try {
      dir = FSDirectory.open(metaDir);
      IndexCommit commit = findCommit(metaDir, dir, segmentsFile);
      // open every file of the commit first (a writer may delete an older commit's files at any
      // time after publishing a newer manifest; open files stay readable), then the reader, then
      // verify the checksums through the inputs opened first
      List<String> names = new ArrayList<>(commit.getFileNames());
      List<IndexInput> pinned = new ArrayList<>();
      List<FileChannel> channels = new ArrayList<>(); // the same files, for fast reads
      DirectoryReader reader = null;
      try {
        for (String name : names) {
          if (Files.isDirectory(metaDir.resolve(name)))
            throw folderForFile(metaDir.resolve(name), null);
          try {
            pinned.add(dir.openInput(name, IOContext.READONCE));
            channels.add(FileChannel.open(metaDir.resolve(name), StandardOpenOption.READ));
          } catch (NoSuchFileException | FileNotFoundException e) {
            throw new BadInputException("metadata file " + metaDir.resolve(name) + " is missing", e);
          } catch (IOException e) {
            throw new BadInputException("metadata file " + metaDir.resolve(name) + " cannot be opened: " + e, e);
          }
        }
        IOException openError = null;
        try {
          reader = DirectoryReader.open(commit);
        } catch (IOException e) {
          openError = e; // the checksums below name the damaged file, if one is
        }
        long largest = 0;
        for (IndexInput in : pinned) largest = Math.max(largest, in.length());
        ByteBuffer chunk = ByteBuffer.allocateDirect(Math.clamp(largest, 1, 1 << 20)); // one for every file
        for (int i = 0; i < pinned.size(); i++) {
          try {
            checksumByReading(pinned.get(i), channels.get(i), chunk);
          } catch (IOException e) {
            throw new BadInputException("metadata file " + metaDir.resolve(names.get(i)) + " is damaged: "
                + e.getMessage(), e);
          }
        }
        if (openError != null)
          throw new BadInputException("metadata store " + metaDir + " is damaged: " + openError.getMessage(), openError);
      } catch (RuntimeException e) {
        if (reader != null) reader.close();
        throw e;
      } finally {
        IOUtils.close(pinned);
        IOUtils.close(channels);
      }
      return new MetaStore(dir, reader, kinds(commit.getUserData()), bitmap(deleted), bare, maxId);
    } catch (IOException e) {
      close(dir);
      throw new UncheckedIOException("cannot open metadata store " + metaDir, e);
    } catch (RuntimeException e) {
      close(dir);
      throw e;
    }
  }

  /** The members of {@code ids}, runs of consecutive ids added as ranges (a store without metadata: every id bare). */
  private static RoaringBitmap bitmap(IdSet ids) {
    RoaringBitmap out = new RoaringBitmap();
    int[] batch = new int[256];
    for (int from = 0;;) {
      int got = ids.next(from, batch);
      if (got == 0) return out;
      int last = batch[got - 1];
      if (last - batch[0] == got - 1) out.add((long) batch[0], last + 1L);
      else out.addN(batch, 0, got);
      from = last + 1;
    }
  }

  /**
   * Verifies a Lucene file's checksum as {@link CodecUtil#checksumEntireFile} does (the footer's
   * CRC32 of every byte before it), reading the file through {@code ch} in chunks of {@code buf}'s
   * capacity: reading a 37 MB metadata store through Lucene's mapped inputs took about 25 ms,
   * through the channel a few ms (page faults of the mapping, not the CRC, were the cost).
   */
  private static void checksumByReading(IndexInput in, FileChannel ch, ByteBuffer buf) throws IOException {
    long stored = CodecUtil.retrieveChecksum(in); // checks the footer's structure and length too
    long end = in.length() - Long.BYTES;
    CRC32 crc = new CRC32();
    for (long at = 0; at < end;) {
      buf.clear().limit((int) Math.min(buf.capacity(), end - at));
      int r = ch.read(buf, at);
      if (r < 0) throw new CorruptIndexException("file ends before its footer", in);
      at += r;
      crc.update(buf.flip());
    }
    if (crc.getValue() != stored)
      throw new CorruptIndexException("checksum mismatch: footer says 0x" + Long.toHexString(stored)
          + ", content has 0x" + Long.toHexString(crc.getValue()), in);
  }

  private static void close(Directory dir) {
    try {
      if (dir != null) dir.close();
    } catch (IOException ignored) {
      // already failing
    }
  }

  /**
   * Verifies the checksum of every file of commit {@code segmentsFile}: file name -> problem (null
   * when sound), by name. When the commit cannot be read, every file of the folder but other
   * segments files is checked, and the commit is listed as missing or unreadable unless another
   * file is found damaged. A missing folder throws BadInputException.
   */
  public static Map<String, String> checkFiles(Path metaDir, String segmentsFile) {
    if (!Files.isDirectory(metaDir))
      throw noFolder(metaDir, "");
    try (Directory dir = FSDirectory.open(metaDir)) {
      java.util.Collection<String> names;
      String commitProblem = null;
      try {
        names = findCommit(metaDir, dir, segmentsFile).getFileNames();
      } catch (BadInputException e) {
        commitProblem = e.getMessage();
        // the commit does not parse: check every file of the folder but other commits (leftovers,
        // whatever their state), so the damaged one is named
        names = new ArrayList<>(List.of(dir.listAll()));
        names.remove(LOCK_FILE);
        names.removeIf(name -> MetaWriter.otherCommit(name, segmentsFile));
      }
      Map<String, String> out = new LinkedHashMap<>();
      for (String name : new java.util.TreeSet<>(names)) {
        if (Files.isDirectory(metaDir.resolve(name))) {
          out.put(name, "a folder, not a file");
          continue;
        }
        try (IndexInput in = dir.openInput(name, IOContext.READONCE)) {
          CodecUtil.checksumEntireFile(in);
          out.put(name, null);
        } catch (NoSuchFileException | FileNotFoundException e) {
          out.put(name, "missing");
        } catch (IOException | RuntimeException e) {
          out.put(name, "damaged: " + e.getMessage());
        }
      }
      if (commitProblem != null && out.values().stream().allMatch(java.util.Objects::isNull))
        out.put(segmentsFile, !Files.exists(metaDir.resolve(segmentsFile)) ? "missing"
            : Files.isDirectory(metaDir.resolve(segmentsFile)) ? "a folder, not a file" : "unreadable: " + commitProblem);
      return out;
    } catch (IOException e) {
      throw new UncheckedIOException("cannot read metadata store " + metaDir, e);
    }
  }

  static IndexCommit findCommit(Path metaDir, Directory dir, String segmentsFile) {
    if (!Files.exists(metaDir.resolve(segmentsFile))) throw missingCommit(metaDir, segmentsFile);
    if (Files.isDirectory(metaDir.resolve(segmentsFile)))
      throw folderForFile(metaDir.resolve(segmentsFile), null);
    try {
      return new NamedCommit(dir, segmentsFile); // that commit only: no other segments file is read
    } catch (IOException | RuntimeException e) {
      try (java.util.stream.Stream<Path> entries = Files.list(metaDir)) { // Lucene's words for a folder are about mmap limits
        Path folder = entries.filter(Files::isDirectory).findFirst().orElse(null);
        if (folder != null) throw folderForFile(folder, e);
      } catch (IOException listing) {
        e.addSuppressed(listing);
      }
      throw new BadInputException("metadata store " + metaDir + " cannot be read (" + segmentsFile + "): "
          + e.getMessage(), e);
    }
  }

  /** The metadata folder is missing ({@code why} appended) or is not a folder. */
  private static BadInputException noFolder(Path metaDir, String why) {
    return new BadInputException("metadata folder " + metaDir + (Files.exists(metaDir) ? " is not a folder" : " is missing" + why));
  }

  /** A folder where the store keeps a file ({@code cause} nullable: Lucene's own words, which were about mmap limits). */
  private static BadInputException folderForFile(Path file, Throwable cause) {
    return new BadInputException("metadata file " + file + " is a folder, not a file", cause);
  }

  private static BadInputException missingCommit(Path metaDir, String segmentsFile) {
    return new BadInputException("metadata commit " + metaDir.resolve(segmentsFile) + " named by the manifest is missing");
  }

  static Map<String, FieldKind> kinds(Map<String, String> userData) {
    Map<String, FieldKind> out = new TreeMap<>();
    for (String k : MetaSchema.FIXED_KEYWORDS) out.put(k, FieldKind.KEYWORD);
    for (Map.Entry<String, String> e : userData.entrySet())
      if (e.getKey().startsWith(MetaSchema.KIND_PREFIX))
        out.put(e.getKey().substring(MetaSchema.KIND_PREFIX.length()), MetaSchema.kindOf(e.getValue()));
    return out;
  }

  /** Number of live rows (documents and bare ids). */
  public int numDocs() {
    return reader.numDocs() + bare.getCardinality();
  }

  /** Number of Lucene documents (live ids added with metadata). */
  public int documents() {
    return reader.numDocs();
  }

  /** The id a synthesized key "row-ID" names, or -1 if {@code key} is not of that form. */
  public static int syntheticId(String key) {
    if (key == null || !SYNTHETIC.matcher(key).matches()) return -1;
    long id = Long.parseLong(key.substring(4));
    return id <= Integer.MAX_VALUE ? (int) id : -1;
  }

  /** Column name -> kind (key, label, split, source are KEYWORD; "id" is not listed). */
  public Map<String, FieldKind> fields() {
    return Collections.unmodifiableMap(fields);
  }

  /**
   * The columns some stored row holds a value for (a subset of {@link #fields()}: a fixed keyword
   * such as {@code source} is listed there whether or not the metadata had it), sorted by name.
   */
  public List<String> columns() {
    org.apache.lucene.index.FieldInfos infos = org.apache.lucene.index.FieldInfos.getMergedFieldInfos(reader);
    List<String> out = new ArrayList<>();
    for (String f : new java.util.TreeSet<>(fields.keySet())) if (infos.fieldInfo(f) != null) out.add(f);
    return out;
  }

  /** The row of {@code id}: key plus every non-empty column as given; null if the id is not live. */
  public Map<String, String> document(int id) {
    if (bare.contains(id)) {
      Map<String, String> row = new LinkedHashMap<>();
      row.put(MetaSchema.KEY, "row-" + id);
      return row;
    }
    int[] docs = docOfId();
    if (id < 0 || id >= docs.length || docs[id] < 0 || deleted.contains(id)) return null;
    try {
      Map<String, String> out = new LinkedHashMap<>();
      for (IndexableField f : reader.storedFields().document(docs[id]))
        if (!f.name().equals(MetaSchema.ID)) out.put(f.name(), f.stringValue());
      return out;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /**
   * Lucene document number of every id (-1 where none), read once from the id doc values: a
   * lookup by id is then an array read instead of a point query per neighbour.
   */
  private int[] docOfId() {
    int[] docs = docOfId;
    if (docs != null) return docs;
    synchronized (this) {
      if (docOfId == null) docOfId = readDocOfId();
      return docOfId;
    }
  }

  private int[] readDocOfId() {
    try {
      int[] docs = new int[0];
      for (LeafReaderContext leaf : reader.leaves()) {
        NumericDocValues values = leaf.reader().getNumericDocValues(MetaSchema.ID);
        if (values == null) continue;
        Bits live = leaf.reader().getLiveDocs();
        for (int doc = values.nextDoc(); doc != NumericDocValues.NO_MORE_DOCS; doc = values.nextDoc()) {
          if (live != null && !live.get(doc)) continue;
          int id = Math.toIntExact(values.longValue());
          if (id >= docs.length) {
            int old = docs.length;
            docs = java.util.Arrays.copyOf(docs, Math.max(id + 1, old * 2));
            java.util.Arrays.fill(docs, old, docs.length, -1);
          }
          docs[id] = leaf.docBase + doc;
        }
      }
      return docs;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /**
   * A key as a user's file writes it, without the whitespace around it ({@link String#strip}): many
   * CSV writers put a space after each comma, so {@code k, x} means key {@code k}. The one rule for
   * every key read from a file or typed: build/add's metadata CSV (quoted or not), delete's keys
   * file, {@code --where} on {@code key} and {@link #idOfKey}.
   */
  public static String key(String written) {
    return written.strip();
  }

  /**
   * The id of the live code with this key, or -1: the key as given, else without the whitespace
   * around it ({@link #key}), else a live key stored with such whitespace (by a library caller or an
   * index built before the rule) that is this key once it is gone: {@code a} finds a stored
   * {@code ' a'}, so that add refuses {@code a} beside it and delete finds it.
   */
  public int idOfKey(String key) {
    Named n = named(key);
    return n == null ? -1 : n.id();
  }

  /**
   * The key as stored of the live code that {@code typed} names by the rule of {@link #idOfKey}, or
   * {@code typed} without the whitespace around it when none is live: what {@code --where} compares
   * the {@code key} field with, so that a filter on a key and a delete by it pick the same example.
   */
  String storedKey(String typed) {
    Named n = named(typed);
    return n == null ? key(typed) : n.stored();
  }

  /** A live key as stored and its id. */
  private record Named(String stored, int id) {}

  /** The live key {@code typed} names (see {@link #idOfKey}), or null. */
  private Named named(String typed) {
    int id = exactIdOfKey(typed);
    if (id >= 0) return new Named(typed, id);
    String k = key(typed);
    if (!k.equals(typed) && (id = exactIdOfKey(k)) >= 0) return new Named(k, id);
    return spacedKeys().get(k);
  }

  private volatile Map<String, Named> spacedKeys;

  /** Live stored keys with whitespace around them, by the key without it (read once; few or none in most indexes). */
  private Map<String, Named> spacedKeys() {
    Map<String, Named> m = spacedKeys;
    if (m != null) return m;
    m = new HashMap<>();
    try {
      for (LeafReaderContext leaf : reader.leaves()) {
        Terms terms = leaf.reader().terms(MetaSchema.KEY);
        if (terms == null) continue;
        TermsEnum te = terms.iterator();
        Bits live = leaf.reader().getLiveDocs();
        PostingsEnum pe = null;
        for (BytesRef b = te.next(); b != null; b = te.next()) {
          if (b.length == 0) continue;
          int first = b.bytes[b.offset] & 0xff, last = b.bytes[b.offset + b.length - 1] & 0xff;
          if (first > ' ' && first < 0x80 && last > ' ' && last < 0x80) continue; // ASCII ends that are not whitespace: no decoding
          String k = b.utf8ToString();
          if (key(k).equals(k)) continue;
          pe = te.postings(pe, PostingsEnum.NONE);
          for (int d = pe.nextDoc(); d != DocIdSetIterator.NO_MORE_DOCS; d = pe.nextDoc()) {
            if (live != null && !live.get(d)) continue;
            int id = leaf.reader().storedFields().document(d).getField(MetaSchema.ID).numericValue().intValue();
            if (!deleted.contains(id)) m.putIfAbsent(key(k), new Named(k, id));
          }
        }
      }
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    return spacedKeys = Map.copyOf(m);
  }

  /** The live id whose stored key is exactly {@code key} (a bare id's synthesized one included), or -1. */
  private int exactIdOfKey(String key) {
    BytesRef term = new BytesRef(key);
    try {
      for (LeafReaderContext leaf : reader.leaves()) { // by the terms and the id doc values: no query, no stored fields
        Terms terms = leaf.reader().terms(MetaSchema.KEY);
        if (terms == null) continue;
        TermsEnum te = terms.iterator();
        if (!te.seekExact(term)) continue;
        PostingsEnum pe = te.postings(null, PostingsEnum.NONE);
        Bits live = leaf.reader().getLiveDocs();
        NumericDocValues ids = leaf.reader().getNumericDocValues(MetaSchema.ID);
        for (int d = pe.nextDoc(); d != DocIdSetIterator.NO_MORE_DOCS; d = pe.nextDoc()) {
          if (live != null && !live.get(d) || ids == null || !ids.advanceExact(d)) continue;
          int id = Math.toIntExact(ids.longValue());
          if (!deleted.contains(id)) return id;
        }
      }
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    int id = syntheticId(key);
    return id >= 0 && bare.contains(id) ? id : -1;
  }

  /**
   * The live ids whose row holds a value in column {@code field} (every live id for {@code key}; a bare
   * id holds no other), a set over {@code [0, maxId)}: a search filter of the reader this store belongs to.
   */
  public IdSet selectHaving(String field) {
    return select(field.equals(MetaSchema.KEY) ? MatchAllDocsQuery.INSTANCE : new FieldExistsQuery(field));
  }

  /**
   * The live ids whose KEYWORD column {@code field} holds exactly {@code text} (a bare id's key
   * "row-ID" included), a set over {@code [0, maxId)}. A NUMBER column matches nothing here: compare
   * numbers through {@link Where}.
   */
  public IdSet selectEqual(String field, String text) {
    return select(new TermQuery(new Term(field, text)));
  }

  /**
   * The live ids whose KEYWORD column {@code field} holds a value that {@code regexp} matches whole, a
   * set over {@code [0, maxId)}. The expression is in Lucene's regular-expression syntax (its {@code
   * RegExp}: no anchors, {@code .} any character, a backslash escapes; {@code ( ) | ? * +} and
   * character classes as usual); it is run against the column's distinct values, not per id.
   */
  public IdSet selectMatching(String field, String regexp) {
    return select(new RegexpQuery(new Term(field, regexp)));
  }

  /**
   * The live ids matching {@code query}, a set over {@code [0, maxId)}: a search filter of the reader
   * this store belongs to. The Lucene entry of {@link Where} and of the look-ups above; package-private,
   * so that no Lucene type is part of the library's public signatures.
   */
  IdSet select(Query query) {
    RoaringBitmap ids;
    try {
      ids = collect(searcher, query);
      ids.andNot(deleted);
      if (!bare.isEmpty()) ids.or(selectBare(query));
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    long[] words = new long[(maxId + 63) >>> 6];
    ids.forEach((int id) -> {
      if (id >= 0 && id < maxId) words[id >>> 6] |= 1L << (id & 63);
    });
    return IdSet.of(words, maxId);
  }

  private static RoaringBitmap collect(IndexSearcher s, Query query) throws IOException {
    return s.search(query, new CollectorManager<IdCollector, RoaringBitmap>() {
      @Override
      public IdCollector newCollector() {
        return new IdCollector();
      }

      @Override
      public RoaringBitmap reduce(java.util.Collection<IdCollector> collectors) {
        RoaringBitmap all = new RoaringBitmap();
        for (IdCollector c : collectors) all.or(c.ids);
        return all;
      }
    });
  }

  /** The bare ids that {@code query} matches (see the class comment). */
  private RoaringBitmap selectBare(Query query) throws IOException {
    // every bare id whose synthesized key the query names anywhere (also under "not")
    RoaringBitmap named = new RoaringBitmap();
    query.visit(new org.apache.lucene.search.QueryVisitor() {
      @Override
      public void consumeTerms(Query q, Term... terms) {
        for (Term t : terms) {
          int id = t.field().equals(MetaSchema.KEY) ? syntheticId(t.text()) : -1;
          if (id >= 0 && bare.contains(id)) named.add(id);
        }
      }

      @Override
      public void consumeTermsMatching(Query q, String field,
          java.util.function.Supplier<org.apache.lucene.util.automaton.ByteRunAutomaton> automaton) {
        if (!field.equals(MetaSchema.KEY)) return;
        org.apache.lucene.util.automaton.ByteRunAutomaton a = automaton.get();
        for (int id : bare) {
          byte[] key = ("row-" + id).getBytes(java.nio.charset.StandardCharsets.UTF_8);
          if (a.run(key, 0, key.length)) named.add(id);
        }
      }

      @Override
      public org.apache.lucene.search.QueryVisitor getSubVisitor(org.apache.lucene.search.BooleanClause.Occur occur,
          Query parent) {
        return this;
      }
    });
    try (Directory mem = new org.apache.lucene.store.ByteBuffersDirectory();
        org.apache.lucene.index.IndexWriter w = new org.apache.lucene.index.IndexWriter(mem,
            new org.apache.lucene.index.IndexWriterConfig())) {
      w.addDocument(MetaSchema.document(-1, Map.of(), fields));
      for (int id : named) w.addDocument(MetaSchema.document(id, Map.of(MetaSchema.KEY, "row-" + id), fields));
      w.commit();
      try (DirectoryReader r = DirectoryReader.open(mem)) {
        IndexSearcher s = new IndexSearcher(r);
        s.setQueryCache(null);
        RoaringBitmap hits = collect(s, query);
        RoaringBitmap out = new RoaringBitmap();
        for (int id : hits) if (id >= 0) out.add(id);
        if (hits.contains(-1)) {
          RoaringBitmap others = bare.clone();
          others.andNot(named);
          out.or(others);
        }
        return out;
      }
    }
  }

  /** Collects the {@code id} doc value of every match. */
  private static final class IdCollector extends SimpleCollector {
    final RoaringBitmap ids = new RoaringBitmap();
    private NumericDocValues values;

    @Override
    protected void doSetNextReader(LeafReaderContext context) throws IOException {
      values = context.reader().getNumericDocValues(MetaSchema.ID);
    }

    @Override
    public void collect(int doc) throws IOException {
      if (values == null || !values.advanceExact(doc))
        throw new IllegalStateException("metadata document " + doc + " has no id");
      ids.add((int) values.longValue());
    }

    @Override
    public ScoreMode scoreMode() {
      return ScoreMode.COMPLETE_NO_SCORES;
    }
  }

  @Override
  public void close() throws IOException {
    try {
      reader.close();
    } finally {
      dir.close();
    }
  }
}
