package io.actindex.cluster;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.encode.CodeFiles;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.HashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.SplittableRandom;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.RowFactory;
import org.apache.spark.sql.SparkSession;
import org.apache.spark.sql.types.DataTypes;
import org.apache.spark.sql.types.StructType;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The join on Spark in local mode against an O(n^2) join and a breadth-first search written in the
 * test ({@link Fixtures}): uniform and ReLU-like codes with planted near copies, R = 0..6, .npy
 * shards in three forms and Parquet, forced table counts (probes at rho > 0), several partition
 * counts, and block sizes small enough that buckets are split.
 */
class ClusterDupesTest {
  static SparkSession spark;
  @TempDir Path tmp;

  @BeforeAll
  static void start() {
    spark = SparkSession.builder().master("local[2]").appName("ClusterDupesTest").config("spark.ui.enabled", "false")
        .config("spark.sql.shuffle.partitions", "4").getOrCreate();
  }

  @AfterAll
  static void stop() {
    spark.stop();
  }

  static ClusterDupes.Params params(String input, int bits, int radius, int tables, int block, int parts, Path out) {
    return new ClusterDupes.Params(input, Fixtures.layout(bits), null, radius, tables, block, parts, out.toString(),
        ClusterDupes.OutFormat.PARQUET, true, false);
  }

  /** Pairs read back from OUT/pairs as "a,b,d" over row numbers ({@code row} maps a key to its row). */
  static Set<String> pairsOut(Path out, java.util.function.Function<Object, Integer> row) {
    Set<String> s = new HashSet<>();
    for (Row r : spark.read().parquet(out.resolve("pairs").toString()).collectAsList()) {
      int a = row.apply(r.get(0)), b = row.apply(r.get(1));
      assertThat(a).as("key_a < key_b").isLessThan(b);
      assertThat(s.add(a + "," + b + "," + r.getInt(2))).as("pair listed twice: " + r).isTrue();
    }
    return s;
  }

  /** Groups read back from OUT/groups: each a sorted list of rows; checks group_size and group_id = smallest key. */
  static Set<List<Integer>> groupsOut(Path out, java.util.function.Function<Object, Integer> row) {
    Map<Object, List<Integer>> byId = new HashMap<>();
    Map<Object, Long> sizes = new HashMap<>();
    Map<Object, Integer> minRow = new HashMap<>();
    for (Row r : spark.read().parquet(out.resolve("groups").toString()).collectAsList()) {
      byId.computeIfAbsent(r.getAs("group_id"), k -> new ArrayList<>()).add(row.apply(r.getAs("key")));
      sizes.put(r.getAs("group_id"), r.getAs("group_size"));
      minRow.put(r.getAs("group_id"), row.apply(r.getAs("group_id")));
    }
    Set<List<Integer>> s = new HashSet<>();
    for (var e : byId.entrySet()) {
      e.getValue().sort(null);
      assertThat(sizes.get(e.getKey())).isEqualTo(e.getValue().size());
      assertThat(minRow.get(e.getKey())).as("group_id is the smallest key").isEqualTo(e.getValue().get(0));
      s.add(e.getValue());
    }
    return s;
  }

  /** Uniform 96-bit codes with near copies, as three .npy shards (packed, bool, 0/1 uint8), R = 0..6. */
  @Test
  void uniformShardsMatchBruteForce() throws Exception {
    long seed = Randoms.seed(1);
    CodeBlock codes = Fixtures.planted(SyntheticCodes.uniform(300, 96, seed), 300, 6, seed + 1);
    Path shards = tmp.resolve("shards");
    java.nio.file.Files.createDirectories(shards);
    Fixtures.writeShard(shards.resolve("a.npy"), codes, 0, 250, CodeFiles.Form.PACKED);
    Fixtures.writeShard(shards.resolve("b.npy"), codes, 250, 251, CodeFiles.Form.BOOL);
    Fixtures.writeShard(shards.resolve("c.npy"), codes, 251, codes.size(), CodeFiles.Form.UINT8);
    int[][] runs = { // radius, tables (0 = chosen), block size, partitions
        {0, 0, 1000, 0}, {1, 0, 3, 2}, {2, 1, 1000, 3}, {3, 2, 4, 5}, {4, 0, 1000, 1}, {5, 2, 5, 4}, {6, 3, 1000, 7}};
    for (int[] run : runs) {
      String what = "R=" + run[0] + " tables=" + run[1] + " block=" + run[2] + " partitions=" + run[3] + " " + Randoms.describe(seed);
      Path out = tmp.resolve("out-" + run[0]);
      ClusterDupes.Summary s = ClusterDupes.run(spark, params(shards.toString(), 96, run[0], run[1], run[2], run[3], out));
      Set<String> expected = Fixtures.bruteForcePairs(codes, run[0]);
      assertThat(expected).as("planted copies give pairs").isNotEmpty();
      assertThat(pairsOut(out, k -> (int) (long) (Long) k)).as(what).isEqualTo(expected);
      assertThat(s.pairs()).as(what).isEqualTo(expected.size());
      Set<List<Integer>> comps = Fixtures.components(codes.size(), expected);
      assertThat(groupsOut(out, k -> (int) (long) (Long) k)).as(what).isEqualTo(comps);
      assertThat(s.groups()).as(what).isEqualTo(comps.size());
      assertThat(s.examples()).isEqualTo(codes.size());
      if (run[1] > 0) assertThat(s.tables()).isEqualTo(run[1]);
    }
  }

  /**
   * ReLU-like codes (skewed: dead and always-on units, many identical codes) as Parquet with string
   * keys, labels and splits (null and empty cells among them: both unknown, as documented); leakage
   * and conflict flags against the BFS groups.
   */
  @Test
  void reluLikeParquetMatchesBruteForce() throws Exception {
    long seed = Randoms.seed(2);
    CodeBlock codes = Fixtures.planted(SyntheticCodes.reluLike(500, 40, 24, seed).codes(), 150, 6, seed + 1);
    SplittableRandom rnd = new SplittableRandom(seed + 2);
    String[] labels = new String[codes.size()], splits = new String[codes.size()];
    List<Row> rows = new ArrayList<>();
    for (int i = 0; i < codes.size(); i++) {
      int l = rnd.nextInt(10), t = rnd.nextInt(8);
      labels[i] = l == 0 ? null : l == 1 ? "" : "c" + rnd.nextInt(3);
      splits[i] = t == 0 ? "test" : t == 1 ? "" : "train";
      rows.add(RowFactory.create(String.format("ex-%05d", i), Fixtures.packedRow(codes, i), labels[i], splits[i]));
    }
    StructType schema = new StructType().add("id", DataTypes.StringType).add("bits", DataTypes.BinaryType)
        .add("class", DataTypes.StringType).add("part", DataTypes.StringType);
    Path data = tmp.resolve("codes.parquet");
    spark.createDataFrame(rows, schema).repartition(3).write().parquet(data.toString());
    java.util.function.Function<Object, Integer> row = k -> Integer.parseInt(((String) k).substring(3));
    int bits = codes.layout().bits();
    for (int radius = 0; radius <= 6; radius++) {
      String what = "R=" + radius + " " + Randoms.describe(seed);
      Path out = tmp.resolve("relu-" + radius);
      var p = new ClusterDupes.Params(data.toString(), codes.layout(), new CodeInput.Columns("id", "bits", "class", "part"), radius,
          radius == 5 ? 2 : 0, radius % 2 == 0 ? 16 : 1000, radius + 1, out.toString(), ClusterDupes.OutFormat.PARQUET, true, false);
      ClusterDupes.Summary s = ClusterDupes.run(spark, p);
      Set<String> expected = Fixtures.bruteForcePairs(codes, radius);
      assertThat(pairsOut(out, row)).as(what).isEqualTo(expected);
      Set<List<Integer>> comps = Fixtures.components(codes.size(), expected);
      assertThat(groupsOut(out, row)).as(what).isEqualTo(comps);
      long cross = comps.stream().filter(g -> distinct(g, splits) > 1).count();
      long conflict = comps.stream().filter(g -> distinct(g, labels) > 1).count();
      assertThat(s.crossSplitGroups()).as(what).isEqualTo(cross);
      assertThat(s.conflictingGroups()).as(what).isEqualTo(conflict);
      assertThat(s.largestGroup()).as(what).isEqualTo(comps.stream().mapToLong(List::size).max().orElse(0));
      Map<String, Boolean> crossOut = new HashMap<>();
      for (Row r : spark.read().parquet(out.resolve("groups").toString()).collectAsList())
        crossOut.put(r.getAs("key"), r.getAs("cross_split"));
      for (List<Integer> g : comps)
        for (int i : g) assertThat(crossOut.get(String.format("ex-%05d", i))).as(what).isEqualTo(distinct(g, splits) > 1);
      if (radius % 2 == 0 && s.largestBucket() > 16) assertThat(s.splitBuckets()).as(what).isPositive();
    }
  }

  private static long distinct(List<Integer> group, String[] values) {
    return group.stream().map(i -> values[i]).filter(v -> v != null && !v.isEmpty()).distinct().count();
  }

  /**
   * 10,000 identical codes in one bucket (plus 200 random ones): C(10000, 2) = 49,995,000 pairs,
   * counted on the executors (never collected), the bucket split into blocks, one group of 10,000.
   */
  @Test
  @Tag("slow")
  void hugeBucketIsSplitAndCounted() throws Exception {
    long seed = Randoms.seed(3);
    CodeBlock random = SyntheticCodes.uniform(200, 128, seed);
    long[] words = java.util.Arrays.copyOf(random.words(), (10_200) * 2); // rows 200.. are all zero
    CodeBlock codes = new CodeBlock(random.layout(), 10_200, words);
    Path shard = tmp.resolve("big.npy");
    Fixtures.writeShard(shard, codes, 0, codes.size(), CodeFiles.Form.PACKED);
    // the reference: pairs among the 200 random rows, plus each random row within R of the zero code
    int radius = 2;
    long expected = 10_000L * 9_999 / 2;
    for (int a = 0; a < 200; a++) {
      for (int b = a + 1; b < 200; b++) if (Fixtures.distance(codes, a, b) <= radius) expected++;
      if (Fixtures.distance(codes, a, 200) <= radius) expected += 10_000;
    }
    var p = new ClusterDupes.Params(shard.toString(), random.layout(), null, radius, 0, 1000, 8, tmp.resolve("big-out").toString(),
        ClusterDupes.OutFormat.PARQUET, false, false);
    ClusterDupes.Summary s = ClusterDupes.run(spark, p);
    assertThat(s.pairs()).as(Randoms.describe(seed)).isEqualTo(expected).isGreaterThanOrEqualTo(49_995_000L);
    assertThat(s.pairsByDistance()[0]).isGreaterThanOrEqualTo(49_995_000L);
    assertThat(s.largestBucket()).isGreaterThanOrEqualTo(10_000);
    assertThat(s.splitBuckets()).isPositive();
    assertThat(s.largestGroup()).isGreaterThanOrEqualTo(10_000);
    assertThat(tmp.resolve("big-out").resolve("pairs")).doesNotExist();
  }
}
