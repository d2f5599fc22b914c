package io.actindex.bench;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import org.junit.jupiter.api.Test;

class ReportTest {

  private static String sample() throws IOException {
    try (InputStream in = ReportTest.class.getResourceAsStream("/jmh-sample.json")) {
      return new String(in.readAllBytes(), StandardCharsets.UTF_8);
    }
  }

  @Test
  void readsARealJmhResultFile() throws IOException {
    // jmh-sample.json: a JMH 1.37 smoke run of this suite, raw samples removed
    List<Report.Result> rs = Report.Result.parseAll(sample());
    assertThat(rs).hasSize(9);
    Report.Result scan = rs.stream().filter(r -> r.bench().equals("CodeSearchBench") && r.method().equals("knn")).findFirst().orElseThrow();
    assertThat(scan.mode()).isEqualTo("sample");
    assertThat(scan.median()).isEqualTo(403.968);
    assertThat(scan.micros()).isEqualTo(403.968);
    assertThat(scan.params()).containsEntry("searcher", "scan").containsEntry("n", "100000");
    Report.Result bw = rs.stream().filter(r -> r.method().equals("sumAllCores")).findFirst().orElseThrow();
    assertThat(bw.threads()).isEqualTo(2);
    assertThat(bw.micros()).isCloseTo(105464.169, org.assertj.core.data.Offset.offset(0.01));
    // 256 MiB per pass, 2 threads, 105.464 ms per pass
    assertThat(Report.bandwidth(rs, true)).isCloseTo(2 * 268435456 / 0.105464169, org.assertj.core.data.Offset.offset(1e3));
  }

  @Test
  void tableOfTheRealRun() throws IOException {
    String md = Report.render(Report.Result.parseAll(sample()), Map.of());
    // cosine median 96075.776 us / scan median 403.968 us = 237.83
    assertThat(md).contains("| relu | 100k | 256 | in | 10 | actindex plain scan | 404 | 1101 | 238× | 1.00× |");
    // HNSW: 476.16 / 403.968 = 1.179 of the scan; 96075.776 / 476.16 = 201.8
    assertThat(md).contains("| Lucene HNSW cosine (approx.) | 476 | 142 | 202× | 1.18× |");
    assertThat(md).contains("| relu | 100k | 256 | in | 2 | actindex plain scan | 298 | 1.00× |");
  }

  private static Report.Result knn(String bench, Map<String, String> params, double medianMicros) {
    return new Report.Result(bench, "knn", "sample", 1, new TreeMap<>(params), medianMicros, medianMicros, "us/op");
  }

  private static Map<String, String> p(String... kv) {
    Map<String, String> m = new TreeMap<>();
    for (int i = 0; i < kv.length; i += 2) m.put(kv[i], kv[i + 1]);
    return m;
  }

  @Test
  void targetsAreJudgedOnTheirFigures() {
    List<Report.Result> rs = new ArrayList<>();
    String[] base = {"data", "relu", "n", "1000000", "bits", "256", "k", "10"};
    for (String q : new String[] {"in", "ood"}) {
      rs.add(knn("CodeSearchBench", p(concat(base, "queries", q, "searcher", "scan")), 2000));
      rs.add(knn("CodeSearchBench", p(concat(base, "queries", q, "searcher", "planner")), q.equals("in") ? 500 : 2300));
      rs.add(knn("HnswBench", p("n", "1000000", "bits", "256", "k", "10", "queries", q), 700));
    }
    rs.add(knn("CosineBench", p("n", "1000000", "bits", "256", "k", "10", "queries", "in", "method", "loops"), 100_000));
    rs.add(knn("CosineBench", p("n", "1000000", "bits", "256", "k", "10", "queries", "in", "method", "ejml"), 90_000));
    rs.add(new Report.Result("BandwidthBench", "sumOneThread", "avgt", 1, Map.of(), 20, Double.NaN, "ms/op"));
    for (String r : new String[] {"2", "4"}) {
      Map<String, String> rp = p("data", "uniform", "n", "1000000", "bits", "256", "queries", "in", "r", r);
      rs.add(new Report.Result("RadiusBench", "radius", "sample", 1, new TreeMap<>(concatMap(rp, "searcher", "scan")), 2000, 2000, "us/op"));
      rs.add(new Report.Result("RadiusBench", "radius", "sample", 1, new TreeMap<>(concatMap(rp, "searcher", "planner")), 0, r.equals("2") ? 10 : 50, "us/op"));
    }
    Map<String, Map<String, Double>> facts = new TreeMap<>();
    Map<String, String> in = p(concat(base, "queries", "in"));
    facts.put(Facts.key("planner", in), Map.of("bytes_mem", 100.0));
    facts.put(Facts.key("hnsw", in), Map.of("recall_vs_cosine", 0.99));
    String md = Report.render(rs, facts);
    // 500 / 2000 = 0.25 <= 0.4
    assertThat(md).contains("at most 0.4 x plain scan: **met** — planner 500 µs vs scan 2000 µs = 0.250×");
    assertThat(md).contains("faster than Lucene HNSW while exact: **met**");
    // 2300 / 2000 = 1.15 > 1.1
    assertThat(md).contains("planner at most 1.1 x plain scan: **MISSED** — planner 2300 µs vs scan 2000 µs = 1.15×");
    // best cosine 90000 / 500 = 180
    assertThat(md).contains("150 x faster than exact cosine: **met** — exact cosine 90000 µs / planner 500 µs = 180×");
    // scan streams 1e6 x 32 bytes in 2 ms = 16 GB/s; the probe 256 MiB in 20 ms = 13.4 GB/s
    assertThat(md).contains("17 GB/s effective or more: **MISSED** — scan 16.0 GB/s against a measured one-thread bandwidth of 13.4 GB/s");
    // slowest radius: r=4, 2000 / 50 = 40
    assertThat(md).contains("at least 50 x faster than the scan: **MISSED** — slowest measured radius (r=4): 40.0×");
    assertThat(md).contains("tables included: **met** — 100 bytes/example vs 1024 bytes");
  }

  @Test
  void missingFiguresAreSaidToBeMissing() {
    String md = Report.render(List.of(), Map.of());
    assertThat(md).contains("at most 0.4 x plain scan: **NOT MEASURED**");
    assertThat(md).contains("relu: ten segments at most 1.3 x one: **NOT MEASURED**");
    assertThat(md).contains("never above 1.1 x the plain scan (worst measured scenario): **NOT MEASURED**");
  }

  @Test
  void realScaleTargetsAreJudgedWithinTheRun() {
    List<Report.Result> rs = new ArrayList<>();
    double[][] micros = {{2000, 400, 150, 420, 700, 2300}, {1000, 100, 120, 105, 125, 900}}; // scan clean filter1 tomb1 segments10 mask
    String[] scenarios = {"scan", "clean", "filter1", "tomb1", "segments10", "mask"};
    String[] data = {"dense", "relu"};
    for (int d = 0; d < 2; d++)
      for (int s = 0; s < scenarios.length; s++)
        rs.add(knn("RealUseBench", p("data", data[d], "n", "1000000", "bits", "256", "k", "10", "queries", "in", "scenario", scenarios[s]),
            micros[d][s]));
    rs.add(new Report.Result("StoreBench", "open", "avgt", 1, p("data", "relu", "n", "1000000", "bits", "256"), 54, Double.NaN, "ms/op"));
    rs.add(new Report.Result("Build", "build", "ss", 1, p("data", "relu", "n", "1000000", "bits", "256"), 6200, Double.NaN, "ms/op"));
    String md = Report.render(rs, Map.of());
    assertThat(md).contains("dense, in distribution: index at most 0.3 x plain scan: **met** — index 400 µs vs scan 2000 µs = 0.200×");
    assertThat(md).contains("dense: a 1% filter at most 0.1 x plain scan: **met** — filtered 150 µs vs scan 2000 µs = 0.075×");
    assertThat(md).contains("relu: a 1% filter at most 0.1 x plain scan: **MISSED** — filtered 120 µs vs scan 1000 µs = 0.120×");
    assertThat(md).contains("dense: one tombstone at most 1.1 x the clean index: **met** — 420 µs vs 400 µs = 1.05×");
    assertThat(md).contains("dense: ten segments at most 1.3 x one: **MISSED** — 700 µs vs 400 µs = 1.75×");
    assertThat(md).contains("relu: ten segments at most 1.3 x one: **met** — 125 µs vs 100 µs = 1.25×");
    // worst: dense mask 2300 / 2000 = 1.15
    assertThat(md).contains("never above 1.1 x the plain scan (worst measured scenario): **MISSED** — dense, in, mask: 1.15×");
    assertThat(md).contains("relu: open of the 1M-code index at most 100 ms (warm): **met** — 54.0 ms");
    assertThat(md).contains("relu: build of 1M codes from .npy at most 5 s wall on 2 cores: **MISSED** — 6.20 s in process");
  }

  @Test
  void numberFormats() {
    assertThat(Report.fmt(1234.5)).isEqualTo("1235");
    assertThat(Report.fmt(12.345)).isEqualTo("12.3");
    assertThat(Report.fmt(1.2345)).isEqualTo("1.23");
    assertThat(Report.fmt(0.12345)).isEqualTo("0.123");
    assertThat(Report.fmt(Double.NaN)).isEqualTo("–");
    assertThat(Report.count("1000000")).isEqualTo("1M");
    assertThat(Report.count("100000")).isEqualTo("100k");
    assertThat(Report.count("1234")).isEqualTo("1234");
  }

  private static String[] concat(String[] a, String... b) {
    String[] out = java.util.Arrays.copyOf(a, a.length + b.length);
    System.arraycopy(b, 0, out, a.length, b.length);
    return out;
  }

  private static Map<String, String> concatMap(Map<String, String> m, String k, String v) {
    Map<String, String> out = new TreeMap<>(m);
    out.put(k, v);
    return out;
  }
}
