package io.actindex.cluster;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.SyntheticCodes;
import io.actindex.encode.CodeFiles;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.concurrent.atomic.AtomicInteger;
import org.apache.spark.scheduler.SparkListener;
import org.apache.spark.scheduler.SparkListenerJobStart;
import org.apache.spark.sql.RowFactory;
import org.apache.spark.sql.SparkSession;
import org.apache.spark.sql.types.DataTypes;
import org.apache.spark.sql.types.StructType;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Refusals through the command line: exit 2 and one line on stderr naming the file, column or
 * option; the ones decidable from headers and the schema start no step of the join (a listener counts
 * the jobs our steps name).
 */
class BadInputTest {
  static SparkSession spark;
  static final AtomicInteger jobs = new AtomicInteger();
  @TempDir Path tmp;
  String stderr;

  @BeforeAll
  static void start() {
    spark = SparkSession.builder().master("local[2]").appName("BadInputTest").config("spark.ui.enabled", "false")
        .config("spark.sql.shuffle.partitions", "2").getOrCreate();
    spark.sparkContext().addSparkListener(new SparkListener() {
      @Override
      public void onJobStart(SparkListenerJobStart e) {
        // our steps name their jobs; Spark's own schema read (a small job for Parquet) has no name
        if (e.properties() != null && e.properties().getProperty("spark.job.description") != null) jobs.incrementAndGet();
      }
    });
  }

  @AfterAll
  static void stop() {
    spark.stop();
  }

  @BeforeEach
  void reset() throws Exception {
    spark.sparkContext().listenerBus().waitUntilEmpty(10_000);
    jobs.set(0);
  }

  int run(String... args) throws Exception {
    StringWriter out = new StringWriter(), err = new StringWriter();
    int code = Main.run(new PrintWriter(out), new PrintWriter(err), args);
    stderr = err.toString();
    spark.sparkContext().listenerBus().waitUntilEmpty(10_000);
    return code;
  }

  void assertRefused(int code, String... fragments) {
    assertThat(code).as(stderr).isEqualTo(2);
    assertThat(stderr.strip().lines().count()).as(stderr).isEqualTo(1);
    assertThat(stderr).contains(fragments);
  }

  Path shard(String name, int bits, CodeFiles.Form form) throws Exception {
    Path dir = tmp.resolve("shards");
    Files.createDirectories(dir);
    CodeBlock c = SyntheticCodes.uniform(20, bits, bits);
    Fixtures.writeShard(dir.resolve(name), c, 0, 20, form);
    return dir;
  }

  Path parquet() {
    CodeBlock c = SyntheticCodes.uniform(4, 64, 1);
    var rows = new java.util.ArrayList<org.apache.spark.sql.Row>();
    for (int i = 0; i < 4; i++) rows.add(RowFactory.create("k" + i, Fixtures.packedRow(c, i), i == 3 ? "k0" : "x"));
    StructType schema = new StructType().add("id", DataTypes.StringType).add("code", DataTypes.BinaryType).add("text", DataTypes.StringType);
    Path p = tmp.resolve("codes.parquet");
    spark.createDataFrame(rows, schema).write().parquet(p.toString());
    return p;
  }

  @Test
  void mixedLayoutsAcrossShards() throws Exception {
    shard("a.npy", 64, CodeFiles.Form.BOOL);
    Path dir = shard("b.npy", 96, CodeFiles.Form.BOOL);
    assertRefused(run("dupes", "--input", dir.toString(), "--radius", "1", "--out", tmp.resolve("o").toString(), "--master", "local[2]"),
        "b.npy", "96 bits", "a.npy", "64", "mixed layouts");
    assertThat(jobs.get()).isZero();
    assertRefused(run("dupes", "--input", dir.toString(), "--layout", "h:64", "--radius", "1", "--out", tmp.resolve("o").toString()),
        "b.npy", "shape");
    assertThat(jobs.get()).isZero();
    assertThat(tmp.resolve("o")).doesNotExist();
  }

  /** Shards have no columns: a Parquet column option given with them was ignored for the key and code columns. */
  @Test
  void parquetColumnOptionsWithShards() throws Exception {
    Path dir = shard("a.npy", 64, CodeFiles.Form.BOOL);
    String[][] cases = {
      {"--key-column", "id", "--key-column and --code-column"},
      {"--code-column", "bits", "--key-column and --code-column"},
      {"--label-column", "label", "--label-column and --split-column"},
      {"--split-column", "split", "--label-column and --split-column"},
    };
    for (String[] c : cases) {
      assertRefused(run("dupes", "--input", dir.toString(), "--radius", "1", c[0], c[1], "--out", tmp.resolve("o").toString()),
          dir.toString(), c[2]);
      assertThat(tmp.resolve("o")).doesNotExist();
    }
    assertThat(jobs.get()).isZero();
  }

  @Test
  void radiusOutOfRange() throws Exception {
    Path dir = shard("a.npy", 64, CodeFiles.Form.PACKED);
    assertRefused(run("dupes", "--input", dir.toString(), "--layout", "c:64", "--radius", "65", "--out", tmp.resolve("o").toString()),
        "--radius 65", "64 bits");
    assertRefused(run("dupes", "--input", dir.toString(), "--layout", "c:64", "--radius", "-1", "--out", tmp.resolve("o").toString()),
        "--radius", "-1");
    assertRefused(run("dupes", "--input", dir.toString(), "--layout", "c:64", "--radius", "2", "--tables", "65", "--out",
        tmp.resolve("o").toString()), "--tables 65");
    // one table at radius 40: every code would be probed at sum_{r <= 40} C(64, r) (about 1.8e19) keys
    assertRefused(run("dupes", "--input", dir.toString(), "--layout", "c:64", "--radius", "40", "--tables", "1", "--out",
        tmp.resolve("o").toString()), "--tables 1 with --radius 40", "would not finish");
    assertThat(jobs.get()).isZero();
  }

  @Test
  void parquetColumns() throws Exception {
    Path p = parquet();
    reset();
    assertRefused(run("dupes", "--input", p.toString(), "--layout", "c:64", "--radius", "1", "--out", tmp.resolve("o").toString()),
        "codes.parquet", "no column 'key'", "--key-column", "id, code, text");
    assertRefused(run("dupes", "--input", p.toString(), "--layout", "c:64", "--radius", "1", "--key-column", "id", "--code-column", "text",
        "--out", tmp.resolve("o").toString()), "column 'text' is string", "binary");
    assertRefused(run("dupes", "--input", p.toString(), "--layout", "c:64", "--radius", "1", "--key-column", "id", "--label-column", "lbl",
        "--out", tmp.resolve("o").toString()), "no column 'lbl'", "--label-column");
    assertRefused(run("dupes", "--input", p.toString(), "--radius", "1", "--key-column", "id", "--out", tmp.resolve("o").toString()),
        "--layout is needed");
    assertThat(jobs.get()).isZero();
  }

  /** Found in a pass over the rows: still exit 2 and one line naming the key or column. */
  @Test
  void rowsRefusedDuringTheJob() throws Exception {
    Path p = parquet();
    assertRefused(run("dupes", "--input", p.toString(), "--layout", "c:64", "--radius", "1", "--key-column", "text",
        "--out", tmp.resolve("o1").toString()), "key 'x' appears 3 times");
    assertRefused(run("dupes", "--input", p.toString(), "--layout", "c:72", "--radius", "1", "--key-column", "id",
        "--out", tmp.resolve("o2").toString()), "key 'k", "column 'code' has 8 bytes; the layout needs 9");
  }

  @Test
  void outputExistsAndBadOptions() throws Exception {
    Path dir = shard("a.npy", 64, CodeFiles.Form.PACKED);
    Path out = tmp.resolve("full");
    Files.createDirectories(out);
    Files.writeString(out.resolve("x"), "keep");
    assertRefused(run("dupes", "--input", dir.toString(), "--layout", "c:64", "--radius", "1", "--out", out.toString()), "--overwrite");
    assertThat(Files.readString(out.resolve("x"))).isEqualTo("keep");
    // --overwrite deletes --out first: an input inside it, or --out inside the input, is refused untouched
    byte[] shardBytes = Files.readAllBytes(dir.resolve("a.npy"));
    assertRefused(run("dupes", "--input", dir.toString(), "--layout", "c:64", "--radius", "1", "--out", dir.toString(), "--overwrite"),
        "overlap");
    assertRefused(run("dupes", "--input", dir.resolve("a.npy").toString(), "--layout", "c:64", "--radius", "1", "--out", dir.toString(),
        "--overwrite"), "overlap");
    assertRefused(run("dupes", "--input", dir.toString(), "--layout", "c:64", "--radius", "1", "--out", dir.resolve("sub").toString(),
        "--overwrite"), "overlap");
    assertThat(Files.readAllBytes(dir.resolve("a.npy"))).isEqualTo(shardBytes);
    assertRefused(run("dupes", "--input", tmp.resolve("missing").toString(), "--radius", "1", "--out", tmp.resolve("o").toString()),
        "missing", "no such file");
    assertRefused(run("dupes", "--input", dir.toString(), "--radius", "1", "--out", tmp.resolve("o").toString(), "--out-format", "xml"),
        "--out-format");
    assertRefused(run("dupes", "--input", dir.toString(), "--layout", "c", "--radius", "1", "--out", tmp.resolve("o").toString()),
        "--layout");
    assertRefused(run("dupes", "--radius", "1"), "--input");
    assertThat(jobs.get()).isZero();
    assertThat(List.of(tmp.resolve("o"))).allMatch(f -> !Files.exists(f));
  }

  /**
   * The library names Java parameters, never options (DEVELOPERS.md, "Writing a message"); the command
   * line prints each as its option, in the words it printed before the library named them.
   */
  @Test
  void theLibraryNamesJavaParametersAndTheCommandLineItsOptions() throws Exception {
    var dupes = new picocli.CommandLine(new DupesCommand()).getCommandSpec();
    for (String option : Main.SPELLED.values()) assertThat(dupes.findOption(option)).as(option).isNotNull();
    Path dir = shard("a.npy", 64, CodeFiles.Form.PACKED);
    CodeLayout c64 = CodeLayout.parseTyped("c:64");
    String out = tmp.resolve("o").toString(), pq = parquet().toString();
    refusedAs("radius", () -> new ClusterDupes.Params(dir.toString(), c64, null, -1, 0, 1000, 0, out, ClusterDupes.OutFormat.PARQUET, true, false));
    refusedAs("tables", () -> new ClusterDupes.Params(dir.toString(), c64, null, 1, -1, 1000, 0, out, ClusterDupes.OutFormat.PARQUET, true, false));
    refusedAs("blockSize", () -> new ClusterDupes.Params(dir.toString(), c64, null, 1, 0, 1, 0, out, ClusterDupes.OutFormat.PARQUET, true, false));
    refusedAs("partitions", () -> new ClusterDupes.Params(dir.toString(), c64, null, 1, 0, 1000, -1, out, ClusterDupes.OutFormat.PARQUET, true, false));
    refusedAs("radius", () -> ClusterDupes.run(spark, new ClusterDupes.Params(dir.toString(), c64, null, 65, 0, 1000, 0, out,
        ClusterDupes.OutFormat.PARQUET, true, false)));
    assertThatThrownBy(() -> ClusterDupes.run(spark, new ClusterDupes.Params(dir.toString(), c64, null, 40, 1, 1000, 0, out,
        ClusterDupes.OutFormat.PARQUET, true, false))).isInstanceOf(BadParameterException.class)
        .hasMessageStartingWith("tables 1 with `radius` 40").hasMessageEndingWith("leave `tables` out").message().doesNotContain("--");
    assertThatThrownBy(() -> ClusterDupes.run(spark, new ClusterDupes.Params(dir.toString(), c64,
        new CodeInput.Columns(null, null, "label", null), 1, 0, 1000, 0, out, ClusterDupes.OutFormat.PARQUET, true, false)))
        .isInstanceOf(BadInputException.class).hasMessageContaining("`columns.label` and `columns.split`").message().doesNotContain("--");
    refusedAs("layout", () -> ClusterDupes.run(spark, new ClusterDupes.Params(pq, null, null, 1, 0, 1000, 0, out,
        ClusterDupes.OutFormat.PARQUET, true, false)));
    assertThat(tmp.resolve("o")).doesNotExist();

    assertThat(run("dupes", "--input", dir.toString(), "--layout", "c:64", "--radius", "65", "--out", out)).isEqualTo(2);
    assertThat(stderr).isEqualTo("actindex-cluster: --radius 65 is larger than the code length (64 bits)" + System.lineSeparator());
    assertThat(run("dupes", "--input", dir.toString(), "--layout", "c:64", "--radius", "40", "--tables", "1", "--out", out)).isEqualTo(2);
    assertThat(stderr).startsWith("actindex-cluster: --tables 1 with --radius 40 sends every code to ")
        .endsWith("or leave --tables out" + System.lineSeparator());
    assertThat(run("dupes", "--input", dir.toString(), "--radius", "1", "--split-column", "s", "--out", out)).isEqualTo(2);
    assertThat(stderr).isEqualTo("actindex-cluster: " + dir + ": --label-column and --split-column need Parquet input (.npy shards carry"
        + " codes only)" + System.lineSeparator());
    assertThat(run("dupes", "--input", pq, "--layout", "c:64", "--radius", "1", "--code-column", "bits", "--key-column",
        "id", "--out", out)).isEqualTo(2);
    assertThat(stderr).contains(": no column 'bits' (--code-column); columns: id, code, text");
    Path full = Files.createDirectories(tmp.resolve("full"));
    Files.writeString(full.resolve("x"), "keep");
    assertThat(run("dupes", "--input", dir.toString(), "--layout", "c:64", "--radius", "1", "--out", full.toString())).isEqualTo(2);
    assertThat(stderr).isEqualTo("actindex-cluster: " + full + ": --out exists and is not empty (pass --overwrite to replace it)"
        + System.lineSeparator());
  }

  private static void refusedAs(String parameter, org.assertj.core.api.ThrowableAssert.ThrowingCallable call) {
    assertThatThrownBy(call).as(parameter).isInstanceOfSatisfying(BadParameterException.class, e -> {
      assertThat(e.parameter()).as(e.getMessage()).isEqualTo(parameter);
      assertThat(e.getMessage()).startsWith(parameter).doesNotContain("--");
    });
  }
}
