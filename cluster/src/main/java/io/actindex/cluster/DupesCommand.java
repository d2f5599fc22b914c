package io.actindex.cluster;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeLayout;
import java.io.PrintWriter;
import java.util.Locale;
import java.util.concurrent.Callable;
import org.apache.spark.SparkConf;
import org.apache.spark.sql.SparkSession;
import picocli.CommandLine.Command;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;
import picocli.CommandLine.Model.CommandSpec;

/** {@code actindex-cluster dupes}: parses, runs {@link ClusterDupes#run}, prints the summary. */
@Command(name = "dupes", mixinStandardHelpOptions = true, sortOptions = false,
    description = {"Every pair of examples whose codes are within Hamming distance R, exactly, on Spark; their groups "
        + "(connected components) and a summary. Writes OUT/pairs (key_a,key_b,distance), OUT/groups "
        + "(key,group_id,group_size[,cross_split][,conflicting_labels]) and OUT/summary.json."})
final class DupesCommand implements Callable<Integer> {
  @Spec CommandSpec spec;

  @Option(names = "--input", required = true, paramLabel = "PATH",
      description = "A .npy codes file, a folder of .npy shards (joined in name order; key = row number across shards), "
          + "or a Parquet dataset with a key column and a binary code column (packbits order).")
  String input;

  @Option(names = "--layout", paramLabel = "LAYOUT",
      description = "Code layout name:bits[,name:bits...]; needed for Parquet and for packed .npy shards; every shard must fit it.")
  String layout;

  @Option(names = "--radius", required = true, paramLabel = "R", description = "Largest Hamming distance of a pair, 0..code length.")
  int radius;

  @Option(names = "--out", required = true, paramLabel = "PATH", description = "Output folder (any Hadoop file system URI); must not exist or be empty.")
  String out;

  @Option(names = "--master", paramLabel = "URL",
      description = "Spark master, e.g. local[2]; default: what spark-submit set, else local[*].")
  String master;

  @Option(names = "--key-column", paramLabel = "NAME", description = "Parquet key column (unique). Default: key.")
  String keyColumn;

  @Option(names = "--code-column", paramLabel = "NAME", description = "Parquet binary code column. Default: code.")
  String codeColumn;

  @Option(names = "--label-column", paramLabel = "NAME", description = "Parquet label column: groups whose labels differ are flagged.")
  String labelColumn;

  @Option(names = "--split-column", paramLabel = "NAME", description = "Parquet split column: groups that span several splits are flagged (leakage).")
  String splitColumn;

  @Option(names = "--out-format", defaultValue = "parquet", paramLabel = "parquet|csv", description = "Format of pairs and groups. Default: ${DEFAULT-VALUE}.")
  String outFormat;

  @Option(names = "--count-only", description = "Do not write the pairs (groups and summary only).")
  boolean countOnly;

  @Option(names = "--overwrite", description = "Replace an existing --out folder.")
  boolean overwrite;

  @Option(names = "--tables", defaultValue = "0", paramLabel = "M", description = "Substrings (hash tables). Default: 0 = chosen from the code length, R and n.")
  int tables;

  @Option(names = "--block-size", defaultValue = "1000", paramLabel = "B",
      description = "A bucket of more entries is split into blocks of about B, joined block pair by block pair. Default: ${DEFAULT-VALUE}.")
  int blockSize;

  @Option(names = "--partitions", defaultValue = "0", paramLabel = "P", description = "Shuffle partitions. Default: 0 = about one per half million entries.")
  int partitions;

  @Option(names = "--format", defaultValue = "table", paramLabel = "table|json", description = "Summary on stdout. Default: ${DEFAULT-VALUE}.")
  String format;

  @Option(names = "--verbose", description = "Print the stack trace of an internal error.")
  void verbose(boolean v) {
    System.setProperty("actindex.verbose", Boolean.toString(v));
  }

  @Override
  public Integer call() throws Exception {
    ClusterDupes.OutFormat of = switch (outFormat.toLowerCase(Locale.ROOT)) {
      case "parquet" -> ClusterDupes.OutFormat.PARQUET;
      case "csv" -> ClusterDupes.OutFormat.CSV;
      default -> throw new BadInputException("--out-format must be parquet or csv, not '" + CodeInput.snippet(outFormat) + "'");
    };
    if (!format.equals("table") && !format.equals("json"))
      throw new BadInputException("--format must be table or json, not '" + CodeInput.snippet(format) + "'");
    CodeLayout l = null;
    if (layout != null) {
      try {
        l = CodeLayout.parseTyped(layout);
      } catch (IllegalArgumentException e) {
        throw new BadInputException("--layout: " + e.getMessage());
      }
    }
    var params = new ClusterDupes.Params(input, l, new CodeInput.Columns(keyColumn, codeColumn, labelColumn, splitColumn), radius, tables,
        blockSize, partitions, out, of, !countOnly, overwrite);
    boolean existing = SparkSession.getDefaultSession().isDefined();
    SparkSession spark = session(master);
    try {
      ClusterDupes.Summary s = ClusterDupes.run(spark, params);
      PrintWriter w = spec.commandLine().getOut();
      if (format.equals("json")) w.println(SummaryJson.write(s));
      else printTable(w, s);
      w.flush();
      return 0;
    } finally {
      if (!existing) spark.stop();
    }
  }

  /** The session: an existing one (tests, notebooks), else a new one on --master, spark-submit's master, or local[*]. */
  static SparkSession session(String master) {
    SparkSession.Builder b = SparkSession.builder().appName("actindex-cluster dupes");
    SparkConf conf = new SparkConf();
    if (master != null) b.master(master);
    else if (!conf.contains("spark.master")) b.master("local[*]");
    if (!conf.contains("spark.ui.enabled")) b.config("spark.ui.enabled", "false");
    return b.getOrCreate();
  }

  static void printTable(PrintWriter w, ClusterDupes.Summary s) {
    String f = "%-24s %s%n";
    w.printf(f, "examples", s.examples());
    w.printf(f, "bits", s.bits());
    w.printf(f, "radius", s.radius());
    w.printf(f, "pairs", s.pairs());
    for (int d = 0; d < s.pairsByDistance().length; d++) w.printf(f, "  at distance " + d, s.pairsByDistance()[d]);
    w.printf(f, "exact duplicate pairs", s.exactDuplicatePairs());
    w.printf(f, "groups", s.groups());
    w.printf(f, "largest group", s.largestGroup());
    w.printf(f, "examples in groups", s.examplesInGroups());
    w.printf(f, "cross-split groups", s.crossSplitGroups() < 0 ? "- (no --split-column)" : s.crossSplitGroups());
    w.printf(f, "conflicting groups", s.conflictingGroups() < 0 ? "- (no --label-column)" : s.conflictingGroups());
    w.printf(f, "tables", s.tables() + " (substring radius " + s.substringRadius() + ")");
    w.printf(f, "split buckets", s.splitBuckets() + " (largest bucket " + s.largestBucket() + ", block size " + s.blockSize() + ")");
    w.printf(f, "component rounds", s.componentRounds());
    w.printf(f, "seconds", String.format(Locale.ROOT, "%.1f", s.seconds()));
    w.printf("%-40s %6s %6s %9s %14s %14s%n", "step", "stage", "tasks", "seconds", "shuffle write", "shuffle read");
    for (StageLog.Stage st : s.stages())
      w.printf(Locale.ROOT, "%-40s %6d %6d %9.2f %14d %14d%n", CodeInput.snippet(st.step()), st.id(), st.tasks(), st.seconds(),
          st.shuffleWriteBytes(), st.shuffleReadBytes());
  }
}
