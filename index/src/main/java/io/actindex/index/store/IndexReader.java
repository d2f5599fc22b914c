package io.actindex.index.store;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.index.meta.MetaStore;
import io.actindex.index.mih.JointSearch;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.function.IntConsumer;
import java.util.stream.Stream;
import org.roaringbitmap.RoaringBitmap;

/**
 * A point-in-time view of the newest generation of an index folder. Opening maps every file the
 * manifest names and checks its header, length, footer and every count and range (and the CRC32
 * of every byte of small files; Lucene's footers, or checksums of its small files), so a missing,
 * truncated, replaced or mismatched file fails here with a {@link BadInputException} naming it.
 * The CRC of every byte of big files is left to {@link IndexCheck} ({@code actindex check}) and to
 * merges, so opening costs about one copy of the codes and tables into memory. Thread-safe;
 * search results carry global ids. Readers never write to the folder.
 */
public final class IndexReader implements AutoCloseable {
  private static final long RETRY_NANOS = 60_000_000_000L;

  private final Path dir;
  private final Manifest manifest;
  private final List<Segment> segments;
  private final int[] segmentFirstIds;
  private final RoaringBitmap deleted;
  private final Map<String, byte[]> attachments;
  private final MetaStore meta;
  private final int liveCount;
  private final IdSet live; // over [0, maxId); null when nothing is deleted
  private final int words; // per code
  private final Segment[] bySize; // largest first: the search order that shares the k-th distance
  private final JointSearch joint; // k-NN over the segments in that order
  private final Map<Segment, IdSet> liveOrdinals; // per segment, counted once; empty when nothing is deleted
  private final java.util.function.IntFunction<java.util.function.IntPredicate> liveOf; // block b (bySize) -> its live ordinals
  private final List<Magnitudes> magnitudes; // per segment, null entries where none are kept

  private IndexReader(Path dir, Manifest manifest, List<Segment> segments, RoaringBitmap deleted,
      Map<String, byte[]> attachments, MetaStore meta, List<Magnitudes> magnitudes) {
    this.magnitudes = java.util.Collections.unmodifiableList(new ArrayList<>(magnitudes));
    this.dir = dir;
    this.manifest = manifest;
    this.segments = List.copyOf(segments);
    this.segmentFirstIds = new int[segments.size()];
    for (int i = 0; i < segments.size(); i++) segmentFirstIds[i] = manifest.segments().get(i).firstId();
    this.deleted = deleted;
    this.attachments = attachments;
    this.meta = meta;
    this.liveCount = manifest.nextId() - deleted.getCardinality();
    this.words = manifest.layout().words();
    this.live = deleted.isEmpty() ? null : notIn(deleted, manifest.nextId());
    this.bySize = this.segments.toArray(new Segment[0]);
    Arrays.sort(bySize, (a, b) -> Integer.compare(b.size(), a.size()));
    List<CodeSearcher> searchers = new ArrayList<>();
    List<java.util.function.IntUnaryOperator> idOf = new ArrayList<>();
    for (Segment s : bySize) {
      searchers.add(s.searcher());
      idOf.add(s::id);
    }
    this.joint = new JointSearch(manifest.layout(), searchers, idOf);
    this.liveOrdinals = new java.util.IdentityHashMap<>();
    this.liveOf = b -> liveOrdinals.get(bySize[b]);
    if (live != null)
      for (Segment s : this.segments) {
        IdSet o = ordinals(s, live);
        if (o != null) o.count(); // counted here, not per query
        liveOrdinals.put(s, o);
      }
  }

  /** The ids below {@code size} that are not in {@code bits}. */
  private static IdSet notIn(RoaringBitmap bits, int size) {
    long[] words = words(bits, size);
    for (int i = 0; i < words.length; i++) words[i] = ~words[i];
    if ((size & 63) != 0) words[words.length - 1] &= -1L >>> (64 - (size & 63));
    return IdSet.of(words, size);
  }

  /** The ids below {@code size} that are in {@code bits}. */
  private static IdSet in(RoaringBitmap bits, int size) {
    return IdSet.of(words(bits, size), size);
  }

  /** The ids below {@code size} in {@code bits} as the words of a bitset over {@code [0, size)}. */
  private static long[] words(RoaringBitmap bits, int size) {
    long[] words = new long[(size + 63) >>> 6];
    org.roaringbitmap.BatchIterator it = bits.getBatchIterator();
    int[] buf = new int[256];
    while (it.hasNext()) {
      int got = it.nextBatch(buf);
      for (int i = 0; i < got; i++) {
        int id = buf[i];
        if (id >= 0 && id < size) words[id >>> 6] |= 1L << (id & 63);
      }
    }
    return words;
  }

  /**
   * A filter for {@link #search}: the live ids among {@code ids} (any order; repeats and ids outside
   * {@code [0, maxId())} are ignored). Build it once and reuse it for every query with the same filter.
   */
  public IdSet filter(int... ids) {
    int size = manifest.nextId();
    long[] words = new long[(size + 63) >>> 6];
    for (int id : ids) if (id >= 0 && id < size) words[id >>> 6] |= 1L << (id & 63);
    IdSet f = IdSet.of(words, size);
    return live == null ? f : f.and(live);
  }

  /**
   * Opens the newest generation in {@code dir}, verifying every file. If a writer publishes a newer
   * generation and removes this one's files while they load, the open starts over on the newer one.
   */
  public static IndexReader open(Path dir) {
    long started = System.nanoTime();
    while (true) {
      long gen = Manifest.newestGeneration(dir);
      if (gen < 0) throw Manifest.noManifest(dir);
      try {
        return load(dir, gen);
      } catch (RuntimeException e) {
        boolean moved = Manifest.newestGeneration(dir) != gen;
        if (!moved || System.nanoTime() - started > RETRY_NANOS) throw e;
      }
    }
  }

  private static IndexReader load(Path dir, long gen) {
    Manifest m = Manifest.read(dir, gen);
    List<Path> files = new ArrayList<>();
    for (FileRef f : m.files()) files.add(dir.resolve(f.name()));
    try (FileSource.Pinned src = FileSource.pin(files)) {
      return load(dir, gen, m, src);
    }
  }

  private static IndexReader load(Path dir, long gen, Manifest m, FileSource src) {
    List<Segment> segs = new ArrayList<>();
    List<Magnitudes> mags = new ArrayList<>();
    for (Manifest.SegmentEntry e : m.segments()) {
      segs.add(Segment.read(dir, src, m, e, ChecksummedFile.Check.OPEN));
      FileRef ref = m.magnitudes().get(e.segmentId());
      mags.add(ref == null ? null : Magnitudes.read(dir, src, m, e, ref, ChecksummedFile.Check.OPEN));
    }
    RoaringBitmap deleted = Tombstones.read(dir, src, m, ChecksummedFile.Check.OPEN);
    long stored = 0;
    for (Segment s : segs) stored += s.size();
    long liveInSegments = 0;
    for (Segment s : segs) liveInSegments += s.liveCount(deleted);
    int live = m.nextId() - deleted.getCardinality();
    if (liveInSegments != live)
      throw new BadInputException("index " + dir + ": " + Manifest.fileName(gen) + " holds " + stored + " codes of which "
          + liveInSegments + " live, but ids and tombstones say " + live + " are live");
    Map<String, byte[]> att = new HashMap<>();
    for (String name : m.attachments().keySet())
      att.put(name, Attachments.read(dir, src, m, name, ChecksummedFile.Check.OPEN));
    RoaringBitmap documented = m.documentedIds();
    MetaStore meta = MetaStore.open(dir.resolve(IndexWriter.META_DIR), m.metaCommit(), in(deleted, m.nextId()),
        in(documented, m.nextId()), m.nextId());
    int documentedLive = RoaringBitmap.andNot(documented, deleted).getCardinality();
    if (meta.documents() != documentedLive) {
      try {
        meta.close();
      } catch (IOException ignored) {
        // reporting the inconsistency below
      }
      throw new BadInputException("metadata store " + dir.resolve(IndexWriter.META_DIR) + " has " + meta.documents()
          + " documents, " + Manifest.fileName(gen) + " has " + documentedLive + " live codes with metadata");
    }
    return new IndexReader(dir, m, segs, deleted, att, meta, mags);
  }

  public CodeLayout layout() {
    return manifest.layout();
  }

  /** The folder. */
  public Path dir() {
    return dir;
  }

  public Map<String, String> properties() {
    return manifest.properties();
  }

  /** Content of the named attachment (a copy), or null. */
  public byte[] attachment(String name) {
    byte[] b = attachments.get(name);
    return b == null ? null : b.clone();
  }

  /** Ids are {@code 0..maxId()-1}; deleted ones are never reused. */
  public int maxId() {
    return manifest.nextId();
  }

  public int liveCount() {
    return liveCount;
  }

  /** The live ids, a set over {@code [0, maxId())}. */
  public IdSet liveIds() {
    return live == null ? IdSet.all(manifest.nextId()) : live;
  }

  /** True if {@code id} is live. */
  public boolean isLive(int id) {
    return id >= 0 && id < manifest.nextId() && !deleted.contains(id);
  }

  /** A copy of the code of live id {@code id}. */
  public long[] code(int id) {
    if (!isLive(id)) throw new BadParameterException("id", " " + id + " is not live in index " + dir);
    int s = segmentOf(id);
    return segments.get(s).codes().code(segments.get(s).ord(id));
  }

  private int segmentOf(int id) {
    int i = Arrays.binarySearch(segmentFirstIds, id);
    int s = i >= 0 ? i : -i - 2;
    if (s < 0 || segments.get(s).ord(id) < 0) throw new IllegalStateException("live id " + id + " is in no segment");
    return s;
  }

  /** True when every segment keeps its examples' {@link Magnitudes} (false for an empty index). */
  public boolean hasMagnitudes() {
    return !magnitudes.isEmpty() && !magnitudes.contains(null);
  }

  /** Bits per kept value of the first segment that keeps magnitudes, or 0 when none does. */
  public int magnitudeBits() {
    for (Magnitudes m : magnitudes) if (m != null) return m.bits();
    return 0;
  }

  /**
   * Writes the dequantised magnitudes of live id {@code id} (one value per code bit) to
   * {@code out[off..]}; false (nothing written) when its segment keeps none.
   */
  public boolean magnitudes(int id, float[] out, int off) {
    if (!isLive(id)) throw new BadParameterException("id", " " + id + " is not live in index " + dir);
    int s = segmentOf(id);
    Magnitudes m = magnitudes.get(s);
    if (m == null) return false;
    m.dequantise(segments.get(s).ord(id), out, off);
    return true;
  }

  /**
   * Writes the largest rounding error of each kept magnitude of live id {@code id} (half its
   * segment's step per unit) to {@code out[off..]}; false (nothing written) when its segment keeps none.
   */
  public boolean magnitudeErrors(int id, float[] out, int off) {
    if (!isLive(id)) throw new BadParameterException("id", " " + id + " is not live in index " + dir);
    Magnitudes m = magnitudes.get(segmentOf(id));
    if (m == null) return false;
    for (int j = 0; j < m.units(); j++) out[off + j] = m.maxError(j);
    return true;
  }

  /** Calls {@code consumer} with every live id in ascending order. */
  public void forEachLive(IntConsumer consumer) {
    for (Segment s : segments)
      for (int o = 0; o < s.size(); o++) {
        int id = s.id(o);
        if (!deleted.contains(id)) consumer.accept(id);
      }
  }

  /** All live codes in id order; their ids go to {@code idsOut} (length at least liveCount(), or null). */
  public CodeBlock liveCodes(int[] idsOut) {
    if (idsOut != null && idsOut.length < liveCount)
      throw new IllegalArgumentException("idsOut holds " + idsOut.length + " ids, " + liveCount + " are live");
    int w = manifest.layout().words();
    long[] words = new long[Math.multiplyExact(liveCount, w)];
    int i = 0;
    for (Segment s : segments)
      for (int o = 0; o < s.size(); o++) {
        int id = s.id(o);
        if (deleted.contains(id)) continue;
        System.arraycopy(s.codes().words(), o * w, words, i * w, w);
        if (idsOut != null) idsOut[i] = id;
        i++;
      }
    return new CodeBlock(manifest.layout(), liveCount, words);
  }

  /**
   * The {@code k} nearest live codes in {@code filter} (null: all; a set over {@code [0, maxId())},
   * e.g. from {@link #filter}), exact, ties by ascending id; {@code mask} (nullable) limits the
   * distance to its bits. The segments' clusters are searched as one ({@link JointSearch}: one
   * order, one running k-th distance); what is left, largest segment first, each capped by the k-th
   * distance found so far. An empty filter answers at once.
   */
  public Hits search(long[] query, int k, IdSet filter, long[] mask) {
    checkQuery(query, mask);
    IdSet accept = accepted(filter);
    if (k <= 0 || accept != null && accept.isEmpty()) return Hits.EMPTY;
    if (accept != null && fewRejected(accept, k) && defersFilter()) { // first without the test: exact when no answer is rejected
      firstPasses.incrementAndGet();
      Hits h = joint.knn(query, k, null, b -> null, mask);
      if (allIn(h, accept)) return h;
      repeated.incrementAndGet();
    }
    return joint.knn(query, k, accept, filter == null ? liveOf : b -> ordinals(bySize[b], accept), mask);
  }

  /**
   * Largest expected share of queries whose k nearest codes, deleted or filtered out ones included,
   * hold one that {@code accept} rejects, under which {@link #search} first searches without asking
   * the filter (a few deleted examples): the test, made for every code that enters the running top,
   * cost 3-7% of a query over 1M codes with one id rejected (docs/benchmarks.md, "One tombstone on
   * the same files"), a search made twice costs 100% of one.
   */
  private static final double RETRY_SHARE = 0.01;

  /**
   * Share of first passes repeated past which this reader stops trying them (after {@value
   * #FIRST_PASSES_SEEN}): the rejected ids can be the very codes the queries land on (deleted copies
   * of them), where each query would be searched twice.
   */
  private static final double REPEATED_MAX = 0.05;
  private static final int FIRST_PASSES_SEEN = 64;
  private final java.util.concurrent.atomic.AtomicLong firstPasses = new java.util.concurrent.atomic.AtomicLong(),
      repeated = new java.util.concurrent.atomic.AtomicLong();

  /** Whether {@link #search} still tries a first pass without the filter (see {@link #REPEATED_MAX}). */
  boolean defersFilter() {
    long tried = firstPasses.get();
    return tried < FIRST_PASSES_SEEN || repeated.get() <= REPEATED_MAX * tried;
  }

  /**
   * Whether so few ids are rejected that a search without the filter, repeated with it only when one
   * of its k answers is rejected, is expected to be cheaper: about k * rejected / ids of the queries
   * (each answer rejected with the rejected share) are repeated.
   */
  private boolean fewRejected(IdSet accept, int k) {
    long rejected = (long) manifest.nextId() - accept.count();
    return (double) k * rejected <= RETRY_SHARE * manifest.nextId();
  }

  /**
   * Whether every hit is in {@code accept}. The k nearest of all codes, each accepted, are the k
   * nearest accepted codes (an accepted code nearer, or as near with a smaller id, would be among
   * them); a rejected one among them may have pushed out an accepted code, so the search is repeated.
   */
  private static boolean allIn(Hits h, IdSet accept) {
    for (int i = 0; i < h.size(); i++) if (!accept.contains(h.ord(i))) return false;
    return true;
  }

  /** Every live code in {@code filter} (null: all) at distance {@code <= radius}, sorted by (distance, id). */
  public Hits searchRadius(long[] query, int radius, IdSet filter, long[] mask) {
    checkQuery(query, mask);
    IdSet accept = accepted(filter);
    if (accept != null && accept.isEmpty()) return Hits.EMPTY;
    int total = 0;
    List<Hits> parts = new ArrayList<>(segments.size());
    for (Segment s : segments) {
      Hits h = s.searcher().radius(query, radius, filter == null ? liveOrdinals.get(s) : ordinals(s, accept), mask);
      parts.add(h);
      total += h.size();
    }
    int[] ids = new int[total], dists = new int[total];
    int j = 0;
    for (int p = 0; p < parts.size(); p++) {
      Hits h = parts.get(p);
      for (int i = 0; i < h.size(); i++, j++) {
        ids[j] = segments.get(p).id(h.ord(i));
        dists[j] = h.dist(i);
      }
    }
    return Hits.sorted(ids, dists, total);
  }

  /** The live ids the filter keeps (null: every id is live and there is no filter). */
  private IdSet accepted(IdSet filter) {
    if (filter == null) return live;
    if (filter.size() != manifest.nextId())
      throw new IllegalArgumentException("filter over " + filter.size() + " ids, the index has " + manifest.nextId());
    return live == null ? filter : filter.and(live);
  }

  /** The accepted ids of segment s as its ordinals (a window when its ids are contiguous). */
  private static IdSet ordinals(Segment s, IdSet accept) {
    int n = s.size();
    if (accept == null || n == 0) return null;
    int first = s.id(0);
    if (s.id(n - 1) - first == n - 1) return accept.window(first, n);
    int[] ords = new int[n];
    int m = 0;
    for (int o = 0; o < n; o++) if (accept.contains(s.id(o))) ords[m++] = o;
    return IdSet.of(n, Arrays.copyOf(ords, m));
  }

  private void checkQuery(long[] query, long[] mask) {
    int w = words;
    if (query.length != w)
      throw new IllegalArgumentException("query has " + query.length + " words, the index's codes have " + w);
    if (mask != null && mask.length != w)
      throw new IllegalArgumentException("mask has " + mask.length + " words, the index's codes have " + w);
  }

  /**
   * The metadata of this generation: rows by id ({@code document}), ids by key ({@code idOfKey}),
   * columns and their kinds, and filters ({@code Where.select}, {@code selectHaving},
   * {@code selectEqual}) as {@code IdSet}s over {@code [0, maxId())}.
   */
  public MetaStore meta() {
    return meta;
  }

  /** Layout, segments, sizes. */
  public IndexInfo info() {
    List<IndexInfo.SegmentInfo> infos = new ArrayList<>();
    for (int i = 0; i < segments.size(); i++) {
      Segment s = segments.get(i);
      Manifest.SegmentEntry e = manifest.segments().get(i);
      int dead = 0;
      for (int o = 0; o < s.size(); o++) if (deleted.contains(s.id(o))) dead++;
      infos.add(new IndexInfo.SegmentInfo(s.segmentId(), e.firstId(), e.endId(), s.size(), dead, s.bytes(), s.stats()));
    }
    return new IndexInfo(manifest.layout(), manifest.generation(), manifest.nextId(), liveCount, infos, folderBytes());
  }

  private long folderBytes() {
    try (Stream<Path> files = Files.walk(dir)) {
      long total = 0;
      for (Path p : (Iterable<Path>) files::iterator) {
        try {
          if (Files.isRegularFile(p)) total += Files.size(p);
        } catch (IOException ignored) {
          // deleted meanwhile by a writer
        }
      }
      return total;
    } catch (IOException e) {
      throw new UncheckedIOException("cannot list " + dir, e);
    }
  }

  @Override
  public void close() {
    try {
      meta.close();
    } catch (IOException e) {
      throw new UncheckedIOException("closing " + dir, e);
    }
  }
}
