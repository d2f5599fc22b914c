package io.actindex.bench;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.stream.Stream;
import org.apache.lucene.document.Document;
import org.apache.lucene.document.KnnFloatVectorField;
import org.apache.lucene.index.DirectoryReader;
import org.apache.lucene.index.IndexWriter;
import org.apache.lucene.index.IndexWriterConfig;
import org.apache.lucene.index.NoMergePolicy;
import org.apache.lucene.index.VectorSimilarityFunction;
import org.apache.lucene.search.IndexSearcher;
import org.apache.lucene.search.KnnFloatVectorQuery;
import org.apache.lucene.search.ScoreDoc;
import org.apache.lucene.search.TopDocs;
import org.apache.lucene.store.FSDirectory;

/**
 * Lucene's HNSW graph over the float activations, cosine similarity, default graph parameters
 * (16 neighbours, beam 100): the approximate full-precision contender. Rows are added in order by
 * one thread with merging off, so Lucene's document number equals the row.
 */
public final class LuceneHnsw implements AutoCloseable {
  static final String FIELD = "act";
  private final FSDirectory dir;
  private final DirectoryReader reader;
  private final IndexSearcher searcher;
  private final long buildMillis;

  private LuceneHnsw(FSDirectory dir, long buildMillis) throws IOException {
    this.dir = dir;
    this.reader = DirectoryReader.open(dir);
    this.searcher = new IndexSearcher(reader);
    this.buildMillis = buildMillis;
  }

  /** Builds the index of {@code rows} (n x d) in the empty folder {@code path}, then opens it. */
  public static LuceneHnsw build(Path path, float[] rows, int d) throws IOException {
    long t0 = System.nanoTime();
    FSDirectory dir = FSDirectory.open(path);
    IndexWriterConfig cfg = new IndexWriterConfig()
        .setMergePolicy(NoMergePolicy.INSTANCE)
        .setRAMBufferSizeMB(1800)
        .setUseCompoundFile(false);
    try (IndexWriter w = new IndexWriter(dir, cfg)) {
      int n = rows.length / d;
      for (int i = 0; i < n; i++) {
        float[] v = java.util.Arrays.copyOfRange(rows, i * d, (i + 1) * d);
        if (isZero(v)) v[0] = 1; // cosine is undefined for a zero vector (Lucene refuses it): give it an arbitrary direction
        Document doc = new Document();
        doc.add(new KnnFloatVectorField(FIELD, v, VectorSimilarityFunction.COSINE));
        w.addDocument(doc);
      }
      w.commit();
    }
    return new LuceneHnsw(dir, (System.nanoTime() - t0) / 1_000_000);
  }

  /**
   * Opens the cached index of data set {@code key} in the bench data folder, building it first
   * when absent (a {@code done} marker tells a complete build from an interrupted one).
   */
  public static LuceneHnsw cached(String key, float[] rows, int d) throws IOException {
    Path path = BenchData.dir().resolve("hnsw-" + key);
    Path done = path.resolve("done");
    if (Files.exists(done)) {
      return new LuceneHnsw(FSDirectory.open(path), Long.parseLong(Files.readString(done).trim()));
    }
    if (Files.exists(path)) deleteTree(path);
    Files.createDirectories(path);
    LuceneHnsw h = build(path, rows, d);
    Files.writeString(done, Long.toString(h.buildMillis));
    return h;
  }

  /** True if {@link #cached} would open a complete index without building. */
  public static boolean isCached(String key) {
    return Files.exists(BenchData.dir().resolve("hnsw-" + key).resolve("done"));
  }

  /** Rows of the approximate k nearest by cosine, best first. */
  public int[] knn(float[] query, int k) {
    try {
      float[] q = isZero(query) ? query.clone() : query;
      if (q != query) q[0] = 1;
      TopDocs top = searcher.search(new KnnFloatVectorQuery(FIELD, q, k), k);
      int[] out = new int[top.scoreDocs.length];
      int i = 0;
      for (ScoreDoc sd : top.scoreDocs) out[i++] = sd.doc;
      return out;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  public int size() {
    return reader.numDocs();
  }

  public int segments() {
    return reader.leaves().size();
  }

  /** Build time in milliseconds (of the run that built the cached index). */
  public long buildMillis() {
    return buildMillis;
  }

  /** Bytes of the index files (vectors, graph, metadata). */
  public long bytesOnDisk() throws IOException {
    long total = 0;
    for (String f : dir.listAll()) if (!f.equals("done") && !f.equals("write.lock")) total += dir.fileLength(f);
    return total;
  }

  private static boolean isZero(float[] v) {
    for (float x : v) if (x != 0) return false;
    return true;
  }

  private static void deleteTree(Path p) throws IOException {
    try (Stream<Path> s = Files.walk(p)) {
      for (Path q : s.sorted(java.util.Comparator.reverseOrder()).toList()) Files.delete(q);
    }
  }

  @Override
  public void close() throws IOException {
    reader.close();
    dir.close();
  }
}
