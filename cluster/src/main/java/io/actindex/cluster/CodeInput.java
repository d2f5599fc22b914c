package io.actindex.cluster;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.encode.CodeFiles;
import io.actindex.encode.CodeStream;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.List;
import java.util.NoSuchElementException;
import java.util.stream.Stream;
import org.apache.spark.api.java.JavaRDD;
import org.apache.spark.api.java.JavaSparkContext;
import org.apache.spark.sql.Column;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.SparkSession;
import org.apache.spark.sql.functions;
import org.apache.spark.sql.types.BinaryType;
import org.apache.spark.sql.types.DataType;
import org.apache.spark.sql.types.StructField;
import org.apache.spark.sql.types.StructType;
import org.apache.spark.storage.StorageLevel;

/**
 * Where the codes come from, checked on the driver before any work is scheduled: {@code .npy}
 * shards (one file, or every {@code *.npy} of a folder in name order; bool, 0/1 in any integer or
 * float dtype, or packbits uint8; key = the row's number counted across the shards from 0) or a
 * Parquet dataset (a key column, a binary code column in packbits order, optional label and split
 * columns). Every example
 * gets an internal id: its row number for shards, a unique long for Parquet.
 */
abstract sealed class CodeInput {
  /**
   * The Parquet columns the caller names; null for the defaults ({@code key}, {@code code}) / none
   * (label, split). Shards have no columns, so any name given with them is refused.
   */
  record Columns(String key, String code, String label, String split) {
    Columns withDefaults() {
      return new Columns(key != null ? key : "key", code != null ? code : "code", label, split);
    }
  }

  abstract CodeLayout layout();

  /** Every example as an {@link Entry} (id and code, no flips). */
  abstract JavaRDD<Entry> codes(JavaSparkContext jsc);

  /** {@code _id}, {@code key} and, when named, {@code label} and {@code split} (as strings). */
  abstract Dataset<Row> keys(SparkSession spark);

  /** True when the key is the internal id (shards): outputs need no join. */
  abstract boolean keysAreIds();

  boolean hasLabels() {
    return false;
  }

  boolean hasSplits() {
    return false;
  }

  /** Checks that need a pass over the data (null or duplicate keys); nothing for shards. */
  void checkRows() {}

  /** Rows, when known without a pass (shards: from the headers); else -1. */
  long rows() {
    return -1;
  }

  /** Drops what the input keeps cached. */
  void release() {}

  /** Opens and checks {@code input}; the Parquet schema is read through {@code spark}. */
  static CodeInput open(SparkSession spark, String input, CodeLayout layout, Columns cols) throws IOException {
    Path local = input.contains("://") ? null : Path.of(input);
    List<Path> shards = local == null ? List.of() : npyShards(local);
    if (!shards.isEmpty()) {
      if (cols.label() != null || cols.split() != null)
        throw new BadInputException(input + ": `columns.label` and `columns.split` need Parquet input (.npy shards carry codes only)");
      if (cols.key() != null || cols.code() != null)
        throw new BadInputException(input + ": `columns.key` and `columns.code` name Parquet columns; the key of a .npy shard row is its"
            + " row number");
      return NpyShards.check(shards, layout);
    }
    if (local != null && !Files.exists(local)) throw new BadInputException(input + ": no such file or folder");
    if (layout == null) throw new BadParameterException("layout", " is needed for Parquet input (the code column holds packed bytes)");
    return ParquetCodes.check(spark, input, layout, cols);
  }

  private static List<Path> npyShards(Path p) throws IOException {
    if (Files.isRegularFile(p)) return p.getFileName().toString().endsWith(".npy") ? List.of(p) : List.of();
    if (!Files.isDirectory(p)) return List.of();
    try (Stream<Path> s = Files.list(p)) {
      return s.filter(f -> f.getFileName().toString().endsWith(".npy") && Files.isRegularFile(f)).sorted().toList();
    }
  }

  /** Packbits bytes (NumPy's default big bit order) to little-endian words; padding bits must be 0. */
  static long[] unpack(byte[] bytes, int bits, String where) {
    int need = (bits + 7) / 8;
    if (bytes.length != need)
      throw new BadInputException(where + " has " + bytes.length + " bytes; the layout needs " + need + " (" + bits + " bits, packbits order)");
    long[] words = new long[(bits + 63) >>> 6];
    for (int c = 0; c < need; c++) {
      int v = bytes[c] & 0xFF;
      for (int k = 0; k < 8; k++) {
        if ((v >>> (7 - k) & 1) == 0) continue;
        int b = c * 8 + k;
        if (b >= bits) throw new BadInputException(where + ": padding bit " + k + " of byte " + c + " is set but the layout has " + bits + " bits");
        words[b >>> 6] |= 1L << (b & 63);
      }
    }
    return words;
  }

  /** A value from the input for a one-line message (the project's one escaping routine). */
  static String snippet(Object value) {
    return BadInputException.snippet(String.valueOf(value), 60);
  }

  // ---------------------------------------------------------------------------------- .npy shards

  static final class NpyShards extends CodeInput {
    private final List<String> files;
    private final long[] firstRow;
    private final CodeLayout layout;
    private final long rows;

    private NpyShards(List<String> files, long[] firstRow, CodeLayout layout, long rows) {
      this.files = files;
      this.firstRow = firstRow;
      this.layout = layout;
      this.rows = rows;
    }

    /** Reads every shard's header: dtype, width against the layout (or the first shard's width). */
    static NpyShards check(List<Path> shards, CodeLayout layout) throws IOException {
      List<String> files = new ArrayList<>();
      long[] first = new long[shards.size()];
      long rows = 0;
      CodeLayout seen = layout;
      Path firstShard = null;
      for (int i = 0; i < shards.size(); i++) {
        Path f = shards.get(i);
        try (CodeStream s = CodeFiles.read(f, layout)) {
          if (seen == null) {
            seen = s.layout();
            firstShard = f;
          } else if (layout == null && !s.layout().equals(seen)) {
            throw new BadInputException(f + ": " + s.layout().bits() + " bits per code, but " + firstShard + " has "
                + seen.bits() + " (mixed layouts across shards; give `layout` to check each shard against it)");
          }
          first[i] = rows;
          rows += s.rows();
        }
        files.add(f.toAbsolutePath().toString());
      }
      return new NpyShards(files, first, seen, rows);
    }

    @Override
    CodeLayout layout() {
      return layout;
    }

    @Override
    long rows() {
      return rows;
    }

    @Override
    JavaRDD<Entry> codes(JavaSparkContext jsc) {
      List<Integer> idx = new ArrayList<>();
      for (int i = 0; i < files.size(); i++) idx.add(i);
      List<String> f = files;
      long[] first = firstRow;
      String spec = layout.toString(); // CodeLayout is not Serializable: ship its text form
      return jsc.parallelize(idx, Math.max(1, idx.size())).flatMap(i -> new ShardIterator(Path.of(f.get(i)), CodeLayout.parse(spec), first[i]));
    }

    @Override
    Dataset<Row> keys(SparkSession spark) {
      return spark.range(rows).select(functions.col("id").as("_id"), functions.col("id").as("key"));
    }

    @Override
    boolean keysAreIds() {
      return true;
    }
  }

  /** Streams one shard's codes as entries, one chunk of rows in memory at a time. */
  private static final class ShardIterator implements Iterator<Entry> {
    private final CodeStream stream;
    private CodeBlock block;
    private int next;
    private long id;

    ShardIterator(Path file, CodeLayout layout, long firstId) throws IOException {
      stream = CodeFiles.read(file, layout);
      id = firstId;
    }

    @Override
    public boolean hasNext() {
      try {
        if (block != null && next < block.size()) return true;
        block = stream == null ? null : stream.next(8192);
        next = 0;
        if (block == null) stream.close();
        return block != null;
      } catch (IOException e) {
        throw new UncheckedIOException(e);
      }
    }

    @Override
    public Entry next() {
      if (!hasNext()) throw new NoSuchElementException();
      return new Entry(id++, block.code(next++), 0);
    }
  }

  // -------------------------------------------------------------------------------------- Parquet

  static final class ParquetCodes extends CodeInput {
    private final String input;
    private final CodeLayout layout;
    private final Columns cols;
    private final Dataset<Row> data; // _id, _key (as read), _code, label, split

    private ParquetCodes(String input, CodeLayout layout, Columns cols, Dataset<Row> data) {
      this.input = input;
      this.layout = layout;
      this.cols = cols;
      this.data = data;
    }

    /** Reads the schema (no pass over the rows) and checks every named column. */
    static ParquetCodes check(SparkSession spark, String input, CodeLayout layout, Columns named) {
      Columns cols = named.withDefaults();
      Dataset<Row> df;
      try {
        df = spark.read().parquet(input);
      } catch (RuntimeException e) {
        throw new BadInputException(input + ": not a readable Parquet dataset (" + snippet(e.getMessage()) + ")", e);
      }
      StructType schema = df.schema();
      field(schema, input, cols.key(), "`columns.key`");
      DataType codeType = field(schema, input, cols.code(), "`columns.code`");
      if (!(codeType instanceof BinaryType))
        throw new BadInputException(input + ": column '" + cols.code() + "' is " + codeType.simpleString()
            + "; codes must be binary (packbits bytes, " + (layout.bits() + 7) / 8 + " per row)");
      List<Column> sel = new ArrayList<>(List.of(functions.monotonically_increasing_id().as("_id"),
          functions.col(q(cols.key())).as("_key"), functions.col(q(cols.code())).as("_code")));
      if (cols.label() != null) {
        field(schema, input, cols.label(), "`columns.label`");
        sel.add(text(cols.label()).as("label"));
      }
      if (cols.split() != null) {
        field(schema, input, cols.split(), "`columns.split`");
        sel.add(text(cols.split()).as("split"));
      }
      // persisted so that the ids stay the same for the codes and for the keys of the outputs
      Dataset<Row> data = df.select(sel.toArray(Column[]::new)).persist(StorageLevel.MEMORY_AND_DISK());
      return new ParquetCodes(input, layout, cols, data);
    }

    /** A label or split column as text, an empty cell read as null: unknown, as a null is (countDistinct skips nulls). */
    private static Column text(String name) {
      Column c = functions.col(q(name)).cast("string");
      return functions.when(c.notEqual(functions.lit("")), c);
    }

    private static String q(String name) {
      return "`" + name.replace("`", "``") + "`";
    }

    private static DataType field(StructType schema, String input, String name, String parameter) {
      for (StructField f : schema.fields()) if (f.name().equals(name)) return f.dataType();
      List<String> names = new ArrayList<>();
      for (StructField f : schema.fields()) names.add(f.name());
      throw new BadInputException(input + ": no column '" + snippet(name) + "' (" + parameter + "); columns: "
          + snippet(String.join(", ", names)));
    }

    @Override
    CodeLayout layout() {
      return layout;
    }

    @Override
    JavaRDD<Entry> codes(JavaSparkContext jsc) {
      int bits = layout.bits();
      String in = input, codeCol = cols.code();
      return data.select("_id", "_code", "_key").javaRDD().map(r -> {
        if (r.isNullAt(1)) throw new BadInputException(in + ": key '" + snippet(r.get(2)) + "': column '" + codeCol + "' is null");
        return new Entry(r.getLong(0), unpack(r.getAs(1), bits, in + ": key '" + snippet(r.get(2)) + "': column '" + codeCol + "'"), 0);
      });
    }

    @Override
    void checkRows() {
      List<Row> nul = data.filter(functions.col("_key").isNull()).limit(1).collectAsList();
      if (!nul.isEmpty()) throw new BadInputException(input + ": column '" + cols.key() + "' has a null key");
      List<Row> dup = data.groupBy("_key").count().filter(functions.col("count").gt(1)).limit(1).collectAsList();
      if (!dup.isEmpty())
        throw new BadInputException(input + ": column '" + cols.key() + "': key '" + snippet(dup.get(0).get(0)) + "' appears "
            + dup.get(0).getLong(1) + " times; keys must be unique");
    }

    @Override
    Dataset<Row> keys(SparkSession spark) {
      List<Column> sel = new ArrayList<>(List.of(functions.col("_id"), functions.col("_key").as("key")));
      if (hasLabels()) sel.add(functions.col("label"));
      if (hasSplits()) sel.add(functions.col("split"));
      return data.select(sel.toArray(Column[]::new));
    }

    @Override
    boolean keysAreIds() {
      return false;
    }

    @Override
    void release() {
      data.unpersist(false);
    }

    @Override
    boolean hasLabels() {
      return cols.label() != null;
    }

    @Override
    boolean hasSplits() {
      return cols.split() != null;
    }
  }
}
