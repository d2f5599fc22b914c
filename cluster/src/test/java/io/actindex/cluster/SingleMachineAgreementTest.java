package io.actindex.cluster;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.encode.CodeFiles;
import io.actindex.index.store.IndexReader;
import io.actindex.query.Dupes;
import io.actindex.query.IndexBuilder;
import io.actindex.query.MetaCsv;
import io.actindex.query.Progress;
import io.actindex.query.Source;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
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
 * The Spark join and the single-machine {@code dupes} (query's {@link Dupes} over an index built from
 * the same codes, labels and splits) give the same pairs and the same group summary.
 */
@Tag("slow")
class SingleMachineAgreementTest {
  static SparkSession spark;
  @TempDir Path tmp;

  @BeforeAll
  static void start() {
    spark = SparkSession.builder().master("local[2]").appName("SingleMachineAgreementTest").config("spark.ui.enabled", "false")
        .config("spark.sql.shuffle.partitions", "2").getOrCreate();
  }

  @AfterAll
  static void stop() {
    spark.stop();
  }

  @Test
  void sameAnswersAsSingleMachineDupes() throws Exception {
    long seed = Randoms.seed(4);
    CodeBlock codes = Fixtures.planted(SyntheticCodes.reluLike(400, 40, 24, seed).codes(), 150, 6, seed + 1);
    int n = codes.size();
    SplittableRandom rnd = new SplittableRandom(seed + 2);
    StringBuilder csv = new StringBuilder("key,label,split\n");
    List<Row> rows = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      String label = "c" + rnd.nextInt(3), split = rnd.nextInt(6) == 0 ? "test" : "train";
      csv.append(i).append(',').append(label).append(',').append(split).append('\n');
      rows.add(RowFactory.create((long) i, Fixtures.packedRow(codes, i), label, split));
    }
    Path npy = tmp.resolve("codes.npy"), meta = tmp.resolve("meta.csv"), parquet = tmp.resolve("codes.parquet");
    Fixtures.writeShard(npy, codes, 0, n, CodeFiles.Form.PACKED);
    Files.writeString(meta, csv);
    StructType schema = new StructType().add("key", DataTypes.LongType).add("code", DataTypes.BinaryType)
        .add("label", DataTypes.StringType).add("split", DataTypes.StringType);
    spark.createDataFrame(rows, schema).repartition(2).write().parquet(parquet.toString());
    Path index = tmp.resolve("index");
    IndexBuilder.build(new IndexBuilder.BuildParams(index, Source.codes(npy), new MetaCsv.Options(meta, "key", "label", "split"), null,
        codes.layout(), 0), Progress.NONE);
    try (IndexReader reader = IndexReader.open(index)) {
      for (int radius : new int[] {0, 3, 6}) {
        String what = "R=" + radius + " " + Randoms.describe(seed);
        Set<String> single = new HashSet<>();
        Dupes.Result d = Dupes.run(reader, new Dupes.Params(radius, null, null, false, false, 0, 2),
            (a, b, dist) -> single.add(a + "," + b + "," + dist), Progress.NONE);
        Path out = tmp.resolve("out-" + radius);
        ClusterDupes.Summary s = ClusterDupes.run(spark, new ClusterDupes.Params(parquet.toString(), codes.layout(),
            new CodeInput.Columns("key", "code", "label", "split"), radius, 0, 50, 3, out.toString(), ClusterDupes.OutFormat.PARQUET,
            true, false));
        Set<String> cluster = new HashSet<>();
        for (Row r : spark.read().parquet(out.resolve("pairs").toString()).collectAsList())
          cluster.add(r.getLong(0) + "," + r.getLong(1) + "," + r.getInt(2));
        assertThat(cluster).as(what).isEqualTo(single);
        var sm = d.summary();
        assertThat(s.pairs()).as(what).isEqualTo(sm.pairs());
        assertThat(s.exactDuplicatePairs()).as(what).isEqualTo(sm.exactDuplicatePairs());
        assertThat(s.groups()).as(what).isEqualTo(sm.groups());
        assertThat(s.largestGroup()).as(what).isEqualTo(sm.largestGroup());
        assertThat(s.examplesInGroups()).as(what).isEqualTo(sm.examplesInGroups());
        assertThat(s.crossSplitGroups()).as(what).isEqualTo(sm.crossSplitGroups());
        assertThat(s.conflictingGroups()).as(what).isEqualTo(sm.conflictingGroups());
      }
    }
  }
}
