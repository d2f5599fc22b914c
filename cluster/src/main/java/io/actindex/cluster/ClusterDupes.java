package io.actindex.cluster;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeLayout;
import java.io.IOException;
import java.io.OutputStream;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.Iterator;
import java.util.List;
import java.util.Map;
import org.apache.hadoop.fs.FileSystem;
import org.apache.hadoop.fs.Path;
import org.apache.spark.api.java.JavaPairRDD;
import org.apache.spark.api.java.JavaRDD;
import org.apache.spark.api.java.JavaSparkContext;
import org.apache.spark.broadcast.Broadcast;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.RowFactory;
import org.apache.spark.sql.SparkSession;
import org.apache.spark.sql.functions;
import org.apache.spark.sql.types.DataTypes;
import org.apache.spark.sql.types.StructType;
import org.apache.spark.storage.StorageLevel;
import scala.Tuple2;

/**
 * The exact near-duplicate self-join on Spark: every pair of examples whose codes are within Hamming
 * distance {@code radius}, each pair once, their connected components (groups), and a summary.
 *
 * <p>Steps (each a Spark job, named in the stage log): read the codes; choose {@code m} tables and
 * balance the bits over them on a sample ({@link SubstringPlan}); every code emits (table, substring
 * key) for its own bucket and for the buckets within {@code rho = floor(radius/m)} flips; bucket
 * sizes are counted, and a bucket of {@code s > blockSize} entries is split into {@code
 * ceil(s/blockSize)} blocks, each entry replicated to the block pairs it takes part in, so no task
 * holds more than two blocks; each cell is joined and verified on the full codes ({@link CellJoin},
 * pairs kept once: first qualifying table); the pairs are written; each cell's spanning forest goes
 * to the connected-components loop ({@link Components}); groups and the summary are written.
 *
 * <p>Outputs under {@code out}: {@code pairs/} ({@code key_a, key_b, distance}, {@code key_a <
 * key_b}, unordered across rows), {@code groups/} ({@code key, group_id, group_size}, plus {@code
 * cross_split} / {@code conflicting_labels} when split / label columns are given; {@code group_id}
 * is the group's smallest key, so it does not depend on partitioning), {@code summary.json}.
 */
public final class ClusterDupes {
  private ClusterDupes() {}

  /** Bucket sizes are counted on a sample of about this many entries (all of them below it). */
  static final double SAMPLED_ENTRIES = 4_000_000;

  /** Output file format of pairs and groups. */
  public enum OutFormat {
    PARQUET,
    CSV
  }

  /**
   * {@code input} a {@code .npy} file, a folder of {@code .npy} shards, or a Parquet dataset; {@code
   * layout} (null: from the shards' width; needed for Parquet and packed shards); {@code columns}
   * for Parquet; {@code radius} 0..bits; {@code tables} 0 = chosen by cost, else forced (1..bits);
   * {@code blockSize} the largest bucket joined in one piece; {@code partitions} 0 = about one per
   * half million entries (at least the default parallelism); {@code writePairs} false = count only.
   */
  public record Params(String input, CodeLayout layout, CodeInput.Columns columns, int radius, int tables, int blockSize,
      int partitions, String out, OutFormat outFormat, boolean writePairs, boolean overwrite) {
    public Params {
      if (radius < 0) throw new BadParameterException("radius", " must be at least 0, got " + radius);
      if (tables < 0) throw new BadParameterException("tables", " must be at least 0 (0 = chosen), got " + tables);
      if (blockSize < 2) throw new BadParameterException("blockSize", " must be at least 2, got " + blockSize);
      if (partitions < 0) throw new BadParameterException("partitions", " must be at least 0 (0 = chosen), got " + partitions);
      if (columns == null) columns = new CodeInput.Columns(null, null, null, null);
    }
  }

  /**
   * {@code examples} joined over {@code bits}; {@code tables} and {@code substringRadius} (rho);
   * {@code splitBuckets} buckets larger than the block size and the {@code largestBucket} (both
   * estimated from a sample above {@link #SAMPLED_ENTRIES} entries); {@code
   * pairs} within the radius, {@code pairsByDistance[d]}; {@code groups} (components of two or more),
   * the {@code largestGroup}, {@code examplesInGroups}; groups spanning several splits ({@code
   * crossSplitGroups}, leakage) and several labels ({@code conflictingGroups}), -1 without the
   * column; {@code componentRounds} of the Large-Star/Small-Star loop; wall-clock {@code seconds};
   * the {@code stages} run.
   */
  public record Summary(long examples, int bits, int radius, int tables, int substringRadius, int blockSize, long splitBuckets,
      long largestBucket, long pairs, long[] pairsByDistance, long groups, long largestGroup, long examplesInGroups,
      long crossSplitGroups, long conflictingGroups, int componentRounds, double seconds, List<StageLog.Stage> stages) {
    public long exactDuplicatePairs() {
      return pairsByDistance[0];
    }
  }

  /**
   * Most bucket keys a forced table count may send each code to: beyond it the shuffle holds n
   * times that many entries, which no cluster finishes (two tables over 256 bits at radius 6: 2 x
   * C(128, <= 3), about 700,000 keys per code). Before this limit such a run probed for ever.
   */
  static final double MAX_KEYS_PER_CODE = 1e6;

  /** Checks everything that can be checked without a pass over the data; the input, opened. */
  static CodeInput prepare(SparkSession spark, Params p) throws IOException {
    CodeInput in = CodeInput.open(spark, p.input(), p.layout(), p.columns());
    int bits = in.layout().bits();
    if (p.radius() > bits) throw new BadParameterException("radius", " " + p.radius() + " is larger than the code length (" + bits + " bits)");
    if (p.tables() > bits) throw new BadParameterException("tables", " " + p.tables() + " is more than the code's " + bits + " bits");
    if (p.tables() > 0 && SubstringPlan.keysPerCode(bits, p.radius(), p.tables()) > MAX_KEYS_PER_CODE)
      throw new BadParameterException("tables", " " + p.tables() + " with `radius` " + p.radius() + " sends every code to "
          + String.format(java.util.Locale.ROOT, "%.3g", SubstringPlan.keysPerCode(bits, p.radius(), p.tables()))
          + " buckets (substring radius " + p.radius() / p.tables() + "), more than " + MAX_KEYS_PER_CODE
          + ": the join would not finish; give more tables (at most " + bits + ") or leave `tables` out");
    if (p.out() != null) {
      Path out = new Path(p.out());
      FileSystem fs = out.getFileSystem(spark.sparkContext().hadoopConfiguration());
      if (fs.exists(out) && !p.overwrite() && (!fs.getFileStatus(out).isDirectory() || fs.listStatus(out).length > 0))
        throw new BadInputException(p.out() + ": `out` exists and is not empty (pass `overwrite` to replace it)");
      Path input = fs.makeQualified(new Path(p.input())), target = fs.makeQualified(out);
      if (within(input, target) || within(target, input)) // --overwrite deletes the folder first
        throw new BadInputException(p.out() + ": `out` and the input " + p.input() + " overlap (one is inside the other); "
            + "writing there would delete or change the input, so nothing was written: give `out` a folder of its own");
    }
    return in;
  }

  /** Whether {@code inner} is {@code outer} or lies inside it (both qualified). */
  private static boolean within(Path inner, Path outer) {
    for (Path x = inner; x != null; x = x.getParent()) if (x.equals(outer)) return true;
    return false;
  }

  public static Summary run(SparkSession spark, Params p) throws IOException {
    long started = System.nanoTime();
    CodeInput in = prepare(spark, p);
    JavaSparkContext jsc = JavaSparkContext.fromSparkContext(spark.sparkContext());
    StageLog log = new StageLog();
    spark.sparkContext().addSparkListener(log);
    List<Object> persisted = new ArrayList<>();
    String shufflePartitions = spark.conf().get("spark.sql.shuffle.partitions");
    try {
      return join(spark, jsc, in, p, log, persisted, started);
    } finally {
      spark.conf().set("spark.sql.shuffle.partitions", shufflePartitions);
      jsc.setJobDescription(null); // a thread-local property: do not label the caller's later jobs
      in.release();
      for (Object o : persisted) {
        if (o instanceof JavaRDD<?> r) r.unpersist(false);
        if (o instanceof JavaPairRDD<?, ?> r) r.unpersist(false);
      }
      spark.sparkContext().removeSparkListener(log);
    }
  }

  private static Summary join(SparkSession spark, JavaSparkContext jsc, CodeInput in, Params p, StageLog log, List<Object> persisted,
      long started) throws IOException {
    int bits = in.layout().bits(), radius = p.radius(), blockSize = p.blockSize();
    jsc.setJobDescription("check input");
    in.checkRows();

    jsc.setJobDescription("read codes");
    JavaRDD<Entry> codes = in.codes(jsc).persist(StorageLevel.MEMORY_AND_DISK());
    persisted.add(codes);
    long n = in.rows() >= 0 ? in.rows() : codes.count();
    List<Entry> sampled = codes.take(8192);
    long[] sample = new long[sampled.size() * in.layout().words()];
    for (int i = 0; i < sampled.size(); i++) System.arraycopy(sampled.get(i).code, 0, sample, i * in.layout().words(), in.layout().words());
    int m = p.tables() > 0 ? p.tables() : SubstringPlan.chooseTables(bits, radius, n);
    SubstringPlan plan = SubstringPlan.balanced(bits, radius, m, sample, sampled.size());
    int parts = p.partitions() > 0 ? p.partitions()
        : (int) Math.max(jsc.defaultParallelism(), Math.min(100_000, n * (long) plan.keysPerCode() / 500_000));

    spark.conf().set("spark.sql.shuffle.partitions", Integer.toString(parts)); // the groups' joins and aggregations

    // (bucket, entry) for own keys and probes
    JavaPairRDD<Cell, Entry> emitted = codes.flatMapToPair(e -> {
      List<Tuple2<Cell, Entry>> out = new ArrayList<>();
      for (int t = 0; t < plan.tables(); t++) {
        long[] key = plan.key(e.code, t);
        out.add(new Tuple2<>(new Cell(t, key, -1, -1), e));
        int table = t;
        plan.forEachProbe(key, t, (k, r) -> out.add(new Tuple2<>(new Cell(table, k, -1, -1), new Entry(e.id, e.code, r))));
      }
      return out.iterator();
    });

    // Bucket sizes, from a sample when there are many entries: any block count per bucket is exact,
    // it only has to be the same for all of a bucket's entries, so an estimate is enough.
    jsc.setJobDescription("bucket sizes");
    double entries = n * plan.keysPerCode(), fraction = Math.min(1, SAMPLED_ENTRIES / Math.max(1, entries));
    JavaPairRDD<Cell, Entry> counted = fraction < 1 ? emitted.sample(false, fraction, 0x5EED) : emitted;
    JavaPairRDD<Cell, Long> sizes = counted.mapToPair(t -> new Tuple2<>(t._1, 1L)).reduceByKey(Long::sum, parts)
        .mapValues(c -> Math.round(c / fraction));
    // one job: per partition the largest size, then the buckets above the block size
    List<Tuple2<Cell, Long>> found = sizes.mapPartitions(it -> {
      List<Tuple2<Cell, Long>> keep = new ArrayList<>();
      long max = 0;
      while (it.hasNext()) {
        Tuple2<Cell, Long> t = it.next();
        max = Math.max(max, t._2);
        if (t._2 > blockSize) keep.add(t);
      }
      keep.add(new Tuple2<>(null, max));
      return keep.iterator();
    }).collect();
    Map<Cell, Long> big = new HashMap<>();
    long largestBucket = 0;
    for (Tuple2<Cell, Long> t : found) {
      if (t._1 == null) largestBucket = Math.max(largestBucket, t._2);
      else big.put(t._1, t._2);
    }
    Broadcast<Map<Cell, Long>> bigB = jsc.broadcast(big);

    JavaPairRDD<Cell, Iterable<Entry>> cells = emitted.flatMapToPair(t -> {
      Long s = bigB.value().get(t._1);
      if (s == null) return List.of(new Tuple2<>(new Cell(t._1.table, t._1.key, 0, 0), t._2)).iterator();
      int blocks = (int) ((s + blockSize - 1) / blockSize), b = block(t._2.id, blocks);
      Entry e = t._2.inBlock(b);
      List<Tuple2<Cell, Entry>> out = new ArrayList<>(blocks);
      for (int j = 0; j < blocks; j++) out.add(new Tuple2<>(new Cell(t._1.table, t._1.key, Math.min(b, j), Math.max(b, j)), e));
      return out.iterator();
    }).groupByKey(parts);

    Dataset<Row> keys = in.keys(spark);
    Path out = p.out() == null ? null : new Path(p.out());
    if (out != null) {
      FileSystem fs = out.getFileSystem(jsc.hadoopConfiguration());
      if (p.overwrite() && fs.exists(out)) fs.delete(out, true);
      fs.mkdirs(out);
    }
    if (p.writePairs() && out != null) {
      jsc.setJobDescription("join and write pairs");
      JavaRDD<Row> pairRows = cells.flatMap(c -> {
        List<Row> rows = new ArrayList<>();
        CellJoin.pairs(c._1, c._2, plan, (a, b, d) -> rows.add(RowFactory.create(a, b, d)));
        return rows.iterator();
      });
      StructType schema = new StructType().add("a", DataTypes.LongType, false).add("b", DataTypes.LongType, false)
          .add("distance", DataTypes.IntegerType, false);
      Dataset<Row> ids = spark.createDataFrame(pairRows, schema);
      Dataset<Row> pairs = in.keysAreIds() ? ids.select(functions.col("a").as("key_a"), functions.col("b").as("key_b"), functions.col("distance"))
          : withKeys(ids, keys);
      write(pairs, new Path(out, "pairs").toString(), p.outFormat());
    }

    jsc.setJobDescription("join: spanning forests and pair counts");
    int histLen = radius + 1;
    JavaRDD<long[]> forestAndStats = cells.mapPartitions(it -> forests(it, plan, histLen)).persist(StorageLevel.MEMORY_AND_DISK());
    persisted.add(forestAndStats);
    long[] hist = forestAndStats.filter(x -> x[0] < 0).map(x -> java.util.Arrays.copyOfRange(x, 1, x.length))
        .fold(new long[histLen], ClusterDupes::add);
    long pairCount = 0;
    for (long c : hist) pairCount += c;

    jsc.setJobDescription("connected components");
    JavaPairRDD<Long, Long> edges = forestAndStats.filter(x -> x[0] >= 0).mapToPair(x -> new Tuple2<>(x[0], x[1]));
    Components.Result comp = Components.of(edges, parts);
    persisted.add(comp.members().persist(StorageLevel.MEMORY_AND_DISK()));

    jsc.setJobDescription("groups");
    StructType memberSchema = new StructType().add("_id", DataTypes.LongType, false).add("_root", DataTypes.LongType, false);
    Dataset<Row> members = spark.createDataFrame(comp.members().map(t -> RowFactory.create(t._1, t._2)), memberSchema)
        .join(keys, "_id");
    List<org.apache.spark.sql.Column> aggs = new ArrayList<>(List.of(functions.min("key").as("group_id"), functions.count("*").as("group_size")));
    if (in.hasSplits()) aggs.add(functions.countDistinct("split").gt(1).as("cross_split"));
    if (in.hasLabels()) aggs.add(functions.countDistinct("label").gt(1).as("conflicting_labels"));
    Dataset<Row> perGroup = members.groupBy("_root").agg(aggs.get(0), aggs.subList(1, aggs.size()).toArray(org.apache.spark.sql.Column[]::new))
        .persist(StorageLevel.MEMORY_AND_DISK());
    try {
      Row s = perGroup.agg(functions.count("*"), functions.max("group_size"), functions.sum("group_size"),
          in.hasSplits() ? functions.sum(functions.col("cross_split").cast("long")) : functions.lit(-1L),
          in.hasLabels() ? functions.sum(functions.col("conflicting_labels").cast("long")) : functions.lit(-1L)).first();
      if (out != null) {
        List<String> cols = new ArrayList<>(List.of("key", "group_id", "group_size"));
        if (in.hasSplits()) cols.add("cross_split");
        if (in.hasLabels()) cols.add("conflicting_labels");
        Dataset<Row> groups = members.join(perGroup, "_root").select(cols.stream().map(functions::col).toArray(org.apache.spark.sql.Column[]::new));
        jsc.setJobDescription("write groups");
        write(groups, new Path(out, "groups").toString(), p.outFormat());
      }
      jsc.setJobDescription(null);
      long groups = s.getLong(0);
      Summary summary = new Summary(n, bits, radius, plan.tables(), plan.rho(), blockSize, big.size(), largestBucket, pairCount, hist,
          groups, groups == 0 ? 0 : s.getLong(1), groups == 0 ? 0 : s.getLong(2), groups == 0 && in.hasSplits() ? 0 : s.getLong(3),
          groups == 0 && in.hasLabels() ? 0 : s.getLong(4), comp.rounds(), (System.nanoTime() - started) / 1e9,
          log.stages(spark.sparkContext()));
      if (out != null) {
        FileSystem fs = out.getFileSystem(jsc.hadoopConfiguration());
        try (OutputStream os = fs.create(new Path(out, "summary.json"), true)) {
          os.write((SummaryJson.write(summary) + "\n").getBytes(StandardCharsets.UTF_8));
        }
      }
      return summary;
    } finally {
      perGroup.unpersist(false);
    }
  }

  /** Pairs of ids to pairs of keys, the smaller key first. */
  private static Dataset<Row> withKeys(Dataset<Row> ids, Dataset<Row> keys) {
    Dataset<Row> ka = keys.select(functions.col("_id").as("a"), functions.col("key").as("ka"));
    Dataset<Row> kb = keys.select(functions.col("_id").as("b"), functions.col("key").as("kb"));
    return ids.join(ka, "a").join(kb, "b").select(functions.least(functions.col("ka"), functions.col("kb")).as("key_a"),
        functions.greatest(functions.col("ka"), functions.col("kb")).as("key_b"), functions.col("distance"));
  }

  private static void write(Dataset<Row> df, String path, OutFormat f) {
    var w = df.write().mode("error");
    if (f == OutFormat.CSV) w.option("header", "true").csv(path);
    else w.parquet(path);
  }

  /** The block of an entry in a split bucket: a mix of its id, so blocks fill evenly. */
  static int block(long id, int blocks) {
    long h = id * 0x9E3779B97F4A7C15L;
    return (int) Math.floorMod(h ^ (h >>> 29), (long) blocks);
  }

  private static long[] add(long[] a, long[] b) {
    long[] s = a.clone();
    for (int i = 0; i < s.length; i++) s[i] += b[i];
    return s;
  }

  /** Forest edges {@code {a, b}} of every cell of a partition, then one {@code {-1, hist...}} record. */
  private static Iterator<long[]> forests(Iterator<Tuple2<Cell, Iterable<Entry>>> cells, SubstringPlan plan, int histLen) {
    long[] hist = new long[histLen];
    return new Iterator<>() {
      Iterator<long[]> current = java.util.Collections.emptyIterator();
      boolean statsSent;

      @Override
      public boolean hasNext() {
        while (!current.hasNext() && cells.hasNext()) {
          Tuple2<Cell, Iterable<Entry>> c = cells.next();
          current = CellJoin.forest(c._1, c._2, plan, hist).iterator();
        }
        return current.hasNext() || !statsSent;
      }

      @Override
      public long[] next() {
        if (!hasNext()) throw new java.util.NoSuchElementException();
        if (current.hasNext()) return current.next();
        statsSent = true;
        long[] s = new long[histLen + 1];
        s[0] = -1;
        System.arraycopy(hist, 0, s, 1, histLen);
        return s;
      }
    };
  }
}
