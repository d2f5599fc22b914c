package io.actindex.bench;

import io.actindex.encode.io.Json;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.TreeMap;
import java.util.function.Predicate;

/**
 * Turns a JMH result file ({@code -rf json}) and the facts file of the same run into Markdown:
 * the k-NN table (latency, throughput, ratios against exact cosine and against the plain scan,
 * recall, bytes per example, build time), the radius table, the memory-bandwidth figures and the
 * targets of the benchmark issue, each marked met or missed with the measured figure.
 *
 * <p>Usage: {@code Report facts.tsv results.json [more-results.json ...]}.
 */
public final class Report {
  private Report() {}

  /** One JMH result: benchmark class and method, parameters, the median (sample mode) or score. */
  public record Result(String bench, String method, String mode, int threads, Map<String, String> params,
                       double score, double median, String unit) {

    /** Parses JMH's JSON array of results. */
    @SuppressWarnings("unchecked")
    public static List<Result> parseAll(String json) {
      List<Result> out = new ArrayList<>();
      for (Object o : (List<Object>) Json.parse(json)) {
        Map<String, Object> m = (Map<String, Object>) o;
        String full = (String) m.get("benchmark");
        int dot = full.lastIndexOf('.');
        String cls = full.substring(full.lastIndexOf('.', dot - 1) + 1, dot);
        Map<String, String> params = new TreeMap<>();
        if (m.get("params") instanceof Map<?, ?> p) p.forEach((k, v) -> params.put((String) k, (String) v));
        Map<String, Object> pm = (Map<String, Object>) m.get("primaryMetric");
        double median = Double.NaN;
        if (pm.get("scorePercentiles") instanceof Map<?, ?> pct && pct.get("50.0") != null) median = number(pct.get("50.0"));
        out.add(new Result(cls, full.substring(dot + 1), (String) m.get("mode"), (int) number(m.get("threads")),
            params, number(pm.get("score")), median, (String) pm.get("scoreUnit")));
      }
      return out;
    }

    String p(String name) {
      return params.getOrDefault(name, "");
    }

    /** Microseconds per query: the median in sample mode, else the average. */
    double micros() {
      double v = Double.isNaN(median) ? score : median;
      return switch (unit) {
        case "us/op" -> v;
        case "ms/op" -> v * 1e3;
        case "ns/op" -> v / 1e3;
        case "s/op" -> v * 1e6;
        default -> Double.NaN;
      };
    }
  }

  /** One contender in one k-NN setting. */
  record Row(String id, String label, Map<String, String> key, Result oneThread, Result allCores) {}

  public static void main(String[] args) throws IOException {
    if (args.length < 2) {
      System.err.println("usage: Report facts.tsv results.json [more-results.json ...]");
      System.exit(2);
    }
    List<Result> results = new ArrayList<>();
    for (int i = 1; i < args.length; i++) {
      Path f = Path.of(args[i]);
      if (Files.exists(f) && Files.size(f) > 0) results.addAll(Result.parseAll(Files.readString(f)));
    }
    System.out.print(render(results, Facts.read(Path.of(args[0]))));
  }

  /** The whole Markdown report. */
  public static String render(List<Result> results, Map<String, Map<String, Double>> facts) {
    StringBuilder sb = new StringBuilder();
    List<Row> rows = knnRows(results);
    machine(sb, results, rows);
    knnTable(sb, rows, facts);
    radiusTable(sb, results, facts);
    encoding(sb, results);
    storage(sb, results);
    onDisk(sb, results);
    targets(sb, results, rows, facts);
    realScaleTargets(sb, results);
    return sb.toString();
  }

  // ---- k-NN rows ----

  static String contenderId(Result r) {
    return switch (r.bench()) {
      case "CodeSearchBench", "RadiusBench" -> r.p("searcher");
      case "CosineBench" -> "cosine-" + r.p("method");
      case "HnswBench" -> "hnsw";
      default -> null;
    };
  }

  static String label(String id) {
    return switch (id) {
      case "scan" -> "actindex plain scan";
      case "planner" -> "actindex (planner: MIH / cascade / scan)";
      case "mih" -> "actindex MIH (tables always)";
      case "cascade" -> "actindex cascade (" + CodeContenders.CASCADE_TABLES + " tables, always)";
      case "store" -> "actindex on-disk index (IndexReader)";
      case "cosine-loops" -> "exact cosine, float loops";
      case "cosine-ejml" -> "exact cosine, EJML mat-vec";
      case "hnsw" -> "Lucene HNSW cosine (approx.)";
      default -> id;
    };
  }

  /** The data parameters of a k-NN result (cosine and HNSW run on the relu data). */
  static Map<String, String> knnKey(Result r) {
    Map<String, String> k = new TreeMap<>();
    k.put("data", r.params().getOrDefault("data", "relu"));
    for (String p : List.of("n", "bits", "queries", "k")) k.put(p, r.p(p));
    return k;
  }

  static List<Row> knnRows(List<Result> results) {
    Map<String, Row> rows = new LinkedHashMap<>();
    for (Result r : results) {
      if (r.bench().equals("RadiusBench") || r.bench().equals("BandwidthBench")) continue;
      String id = contenderId(r);
      if (id == null) continue;
      Map<String, String> key = knnKey(r);
      String rk = Facts.key(id, key);
      Row old = rows.getOrDefault(rk, new Row(id, label(id), key, null, null));
      boolean all = r.method().endsWith("AllCores");
      rows.put(rk, new Row(id, old.label(), key, all ? old.oneThread() : r, all ? r : old.allCores()));
    }
    List<Row> out = new ArrayList<>(rows.values());
    out.sort(Comparator.<Row, String>comparing(x -> x.key().get("data"))
        .thenComparingInt(x -> Integer.parseInt(x.key().get("n")))
        .thenComparingInt(x -> Integer.parseInt(x.key().get("bits")))
        .thenComparing(x -> x.key().get("queries"))
        .thenComparingInt(x -> Integer.parseInt(x.key().get("k")))
        .thenComparingInt(x -> order(x.id())));
    return out;
  }

  private static int order(String id) {
    List<String> ids = List.of("planner", "store", "mih", "cascade", "scan", "hnsw", "cosine-loops", "cosine-ejml");
    int i = ids.indexOf(id);
    return i < 0 ? ids.size() : i;
  }

  private static double micros(Row r) {
    return r == null || r.oneThread() == null ? Double.NaN : r.oneThread().micros();
  }

  /** The fastest exact cosine time for the same n, bits and k (its cost does not depend on the query). */
  static double cosineMicros(List<Row> rows, Map<String, String> key) {
    double best = Double.NaN;
    for (Row r : rows)
      if (r.id().startsWith("cosine-") && r.key().get("n").equals(key.get("n")) && r.key().get("bits").equals(key.get("bits"))
          && r.key().get("k").equals(key.get("k")) && "relu".equals(key.get("data"))) {
        double m = micros(r);
        if (!Double.isNaN(m) && (Double.isNaN(best) || m < best)) best = m;
      }
    return best;
  }

  static Row find(List<Row> rows, String id, Map<String, String> key) {
    for (Row r : rows) if (r.id().equals(id) && r.key().equals(key)) return r;
    return null;
  }

  private static void knnTable(StringBuilder sb, List<Row> rows, Map<String, Map<String, Double>> facts) {
    if (rows.isEmpty()) return;
    sb.append("\n### Exact k-NN per query\n\n");
    sb.append("Median latency on one thread (JMH sample mode), throughput with one thread per core; ")
        .append("\"vs cosine\" = fastest exact cosine time / this time (same n, bits, k); ")
        .append("\"vs scan\" = this time / plain-scan time (same queries). Recall: share of the exact cosine ")
        .append("k-NN found (for Hamming search, rows tied with the k-th Hamming distance count as found).\n\n");
    sb.append("| data | n | bits | queries | k | contender | median µs | queries/s all cores | vs cosine | vs scan | recall@k vs cosine | bytes/example memory | bytes/example disk | build s |\n");
    sb.append("|---|---:|---:|---|---:|---|---:|---:|---:|---:|---:|---:|---:|---:|\n");
    for (Row r : rows) {
      Map<String, Double> f = facts.getOrDefault(Facts.key(r.id(), r.key()), Map.of());
      double us = micros(r), cos = cosineMicros(rows, r.key());
      Row scan = find(rows, "scan", r.key());
      double scanUs = micros(scan);
      double recall = f.getOrDefault("recall_vs_cosine", Double.NaN);
      if (Double.isNaN(recall) && !r.id().startsWith("cosine-") && !r.id().equals("hnsw") && scan != null)
        recall = facts.getOrDefault(Facts.key("scan", r.key()), Map.of()).getOrDefault("recall_vs_cosine", Double.NaN);
      sb.append("| ").append(r.key().get("data")).append(" | ").append(count(r.key().get("n"))).append(" | ")
          .append(r.key().get("bits")).append(" | ").append(r.key().get("queries")).append(" | ").append(r.key().get("k"))
          .append(" | ").append(r.label()).append(" | ").append(fmt(us)).append(" | ")
          .append(r.allCores() == null ? "–" : fmt(r.allCores().score())).append(" | ")
          .append(ratio(cos / us)).append(" | ").append(ratio(us / scanUs)).append(" | ")
          .append(fmt(recall)).append(" | ").append(fmt(f.getOrDefault("bytes_mem", Double.NaN))).append(" | ")
          .append(fmt(f.getOrDefault("bytes_disk", Double.NaN))).append(" | ")
          .append(fmt(f.getOrDefault("build_ms", Double.NaN) / 1000)).append(" |\n");
    }
  }

  // ---- radius ----

  private static void radiusTable(StringBuilder sb, List<Result> results, Map<String, Map<String, Double>> facts) {
    List<Result> rad = new ArrayList<>(results.stream().filter(r -> r.bench().equals("RadiusBench")).toList());
    if (rad.isEmpty()) return;
    rad.sort(Comparator.<Result, String>comparing(r -> r.p("data"))
        .thenComparingInt(r -> Integer.parseInt(r.p("n")))
        .thenComparingInt(r -> Integer.parseInt(r.p("bits")))
        .thenComparingInt(r -> Integer.parseInt(r.p("r")))
        .thenComparingInt(r -> order(r.p("searcher"))));
    sb.append("\n### Exact radius search (distance ≤ r) per query\n\n");
    sb.append("Median latency on one thread; \"vs scan\" = plain-scan time / this time (higher is better).\n\n");
    sb.append("| data | n | bits | queries | r | contender | median µs | vs scan | hits/query |\n");
    sb.append("|---|---:|---:|---|---:|---|---:|---:|---:|\n");
    for (Result r : rad) {
      Result scan = radiusScan(rad, r);
      Map<String, String> key = radiusKey(r);
      double hits = facts.getOrDefault(Facts.key(r.p("searcher"), key), Map.of()).getOrDefault("hits_per_query", Double.NaN);
      sb.append("| ").append(r.p("data")).append(" | ").append(count(r.p("n"))).append(" | ").append(r.p("bits"))
          .append(" | ").append(r.p("queries")).append(" | ").append(r.p("r")).append(" | ")
          .append(label(r.p("searcher"))).append(" | ").append(fmt(r.micros())).append(" | ")
          .append(ratio(scan == null ? Double.NaN : scan.micros() / r.micros())).append(" | ").append(fmt(hits)).append(" |\n");
    }
  }

  static Map<String, String> radiusKey(Result r) {
    Map<String, String> k = new TreeMap<>();
    for (String p : List.of("data", "n", "bits", "queries", "r")) k.put(p, r.p(p));
    return k;
  }

  private static Result radiusScan(List<Result> rad, Result r) {
    for (Result s : rad) if (s.p("searcher").equals("scan") && radiusKey(s).equals(radiusKey(r))) return s;
    return null;
  }

  // ---- encoding ----

  private static void encoding(StringBuilder sb, List<Result> results) {
    List<Result> enc = results.stream().filter(r -> r.bench().equals("EncodeBench")).toList();
    if (enc.isEmpty()) return;
    sb.append("\n### Encoding float32 .npy activations into codes (one thread, whole file per call)\n\n");
    sb.append("| n | bits | ms per file | examples/s | MB/s of floats |\n|---:|---:|---:|---:|---:|\n");
    for (Result r : enc) {
      double n = Double.parseDouble(r.p("n")), bits = Double.parseDouble(r.p("bits")), s = r.micros() * 1e-6;
      sb.append("| ").append(count(r.p("n"))).append(" | ").append(r.p("bits")).append(" | ").append(fmt(s * 1e3))
          .append(" | ").append(fmt(n / s)).append(" | ").append(fmt(n * bits * 4 / s / 1e6)).append(" |\n");
    }
  }

  // ---- storage ----

  private static void storage(StringBuilder sb, List<Result> results) {
    Result check = first(results, r -> r.bench().equals("StoreBench") && r.method().equals("check"));
    List<Result> store = results.stream().filter(r -> r.bench().equals("StoreBench") || r.bench().equals("Build")).toList();
    if (store.isEmpty()) return;
    sb.append("\n### Storage: open, full check, build from .npy (one thread unless the build uses more)\n\n");
    sb.append("| operation | data | n | bits | ms | ratio to full check |\n|---|---|---:|---:|---:|---:|\n");
    for (Result r : store) {
      String op = r.bench().equals("Build") ? "build from .npy (bool codes, no metadata)"
          : r.method().equals("open") ? "open (headers, footers, counts; warm)" : "check (every byte)";
      String ratio = check != null && r.bench().equals("StoreBench") ? fmt(r.micros() / check.micros()) : "";
      sb.append("| ").append(op).append(" | ").append(r.p("data")).append(" | ").append(count(r.p("n"))).append(" | ")
          .append(r.p("bits")).append(" | ").append(fmt(r.micros() / 1e3)).append(" | ").append(ratio).append(" |\n");
    }
  }

  /**
   * Exact 10-NN through the on-disk index ({@code StoreBench.Query}) against the plain scan over
   * the same codes in the same fork, and the real-use scenarios ({@code RealUseBench}) against
   * their plain scan: medians or averages of one run, so only the ratios are comparable.
   */
  private static void onDisk(StringBuilder sb, List<Result> results) {
    List<Result> knn = results.stream().filter(r -> r.bench().equals("Query") && r.method().equals("knn")).toList();
    if (!knn.isEmpty()) {
      sb.append("\n### On-disk index: exact 10-NN through the reader vs the plain scan (same fork)\n\n");
      sb.append("| data | n | bits | queries | reader µs | scan µs | ratio |\n|---|---:|---:|---|---:|---:|---:|\n");
      for (Result r : knn) {
        Result scan = first(results, x -> x.bench().equals("Query") && x.method().equals("scan") && x.params().equals(r.params()));
        double s = scan == null ? Double.NaN : scan.micros();
        sb.append("| ").append(r.p("data")).append(" | ").append(count(r.p("n"))).append(" | ").append(r.p("bits")).append(" | ")
            .append(r.p("queries")).append(" | ").append(fmt(r.micros())).append(" | ").append(fmt(s)).append(" | ")
            .append(fmt(r.micros() / s)).append(" |\n");
      }
    }
    List<Result> real = results.stream().filter(r -> r.bench().equals("RealUseBench") && !r.p("scenario").equals("scan")).toList();
    if (real.isEmpty()) return;
    sb.append("\n### Real use: filters, deletes, segments, masks (median µs, ratio to the plain scan of the same data and queries)\n\n");
    sb.append("| data | n | queries | k | scenario | µs | ratio to scan |\n|---|---:|---|---:|---|---:|---:|\n");
    for (Result r : real) {
      Result scan = first(results, x -> x.bench().equals("RealUseBench") && x.p("scenario").equals("scan") && x.p("data").equals(r.p("data"))
          && x.p("n").equals(r.p("n")) && x.p("queries").equals(r.p("queries")) && x.p("k").equals(r.p("k")) && x.p("bits").equals(r.p("bits")));
      double s = scan == null ? Double.NaN : scan.micros();
      sb.append("| ").append(r.p("data")).append(" | ").append(count(r.p("n"))).append(" | ").append(r.p("queries")).append(" | ")
          .append(r.p("k")).append(" | ").append(r.p("scenario")).append(" | ").append(fmt(r.micros())).append(" | ")
          .append(fmt(r.micros() / s)).append(" |\n");
    }
  }

  // ---- machine, bandwidth ----

  static Result first(List<Result> results, Predicate<Result> p) {
    for (Result r : results) if (p.test(r)) return r;
    return null;
  }

  /** Bytes per second of the bandwidth probe (one thread, or the sum over all threads). */
  static double bandwidth(List<Result> results, boolean allCores) {
    Result r = first(results, x -> x.bench().equals("BandwidthBench") && x.method().endsWith(allCores ? "AllCores" : "OneThread"));
    if (r == null) return Double.NaN;
    return BandwidthBench.BYTES * (allCores ? r.threads() : 1) / (r.micros() * 1e-6);
  }

  /** Bytes per second the plain scan streams (codes only) for the given k-NN row. */
  static double scanRate(Row scan) {
    int n = Integer.parseInt(scan.key().get("n")), bits = Integer.parseInt(scan.key().get("bits"));
    return (double) n * ((bits + 63) / 64) * 8 / (micros(scan) * 1e-6);
  }

  private static void machine(StringBuilder sb, List<Result> results, List<Row> rows) {
    sb.append("### Memory bandwidth and the plain scan\n\n");
    double one = bandwidth(results, false), all = bandwidth(results, true);
    sb.append("- Memory bandwidth probe (sum of a 256 MB long[]): ").append(gbs(one)).append(" on one thread, ")
        .append(gbs(all)).append(" on all cores.\n");
    for (Row r : rows)
      if (r.id().equals("scan") && r.oneThread() != null && r.key().get("queries").equals("in"))
        sb.append("- Plain scan, ").append(r.key().get("data")).append(' ').append(count(r.key().get("n"))).append(" x ")
            .append(r.key().get("bits")).append(" bits, k=").append(r.key().get("k")).append(": ").append(gbs(scanRate(r)))
            .append(" effective (").append(pct(scanRate(r) / one)).append(" of the one-thread probe).\n");
  }

  // ---- targets ----

  private static void targets(StringBuilder sb, List<Result> results, List<Row> rows, Map<String, Map<String, Double>> facts) {
    sb.append("\n### Targets (1M ReLU-like 256-bit codes, exact 10-NN, one thread)\n\n");
    Map<String, String> in = Map.of("data", "relu", "n", "1000000", "bits", "256", "queries", "in", "k", "10");
    Map<String, String> ood = new TreeMap<>(in);
    ood.put("queries", "ood");
    in = new TreeMap<>(in);
    Row planIn = find(rows, "planner", in), planOod = find(rows, "planner", ood);
    Row scanIn = find(rows, "scan", in), scanOod = find(rows, "scan", ood);
    Row hnswIn = find(rows, "hnsw", in), hnswOod = find(rows, "hnsw", ood);
    double pIn = micros(planIn), sIn = micros(scanIn), pOod = micros(planOod), sOod = micros(scanOod);
    double hIn = micros(hnswIn), cos = cosineMicros(rows, in);
    target(sb, "in-distribution: at most 0.4 x plain scan", pIn / sIn <= 0.4, pIn / sIn,
        "planner " + fmt(pIn) + " µs vs scan " + fmt(sIn) + " µs = " + ratio(pIn / sIn));
    target(sb, "in-distribution: faster than Lucene HNSW while exact", pIn < hIn, pIn / hIn,
        "planner " + fmt(pIn) + " µs vs HNSW " + fmt(hIn) + " µs (HNSW recall@10 " + fmt(fact(facts, "hnsw", in, "recall_vs_cosine")) + ")");
    target(sb, "out-of-distribution: planner at most 1.1 x plain scan", pOod / sOod <= 1.1, pOod / sOod,
        "planner " + fmt(pOod) + " µs vs scan " + fmt(sOod) + " µs = " + ratio(pOod / sOod));
    target(sb, "at least 150 x faster than exact cosine", cos / pIn >= 150, cos / pIn,
        "exact cosine " + fmt(cos) + " µs / planner " + fmt(pIn) + " µs = " + ratio(cos / pIn));
    double rate = scanIn == null ? Double.NaN : scanRate(scanIn), bw = bandwidth(results, false);
    target(sb, "plain Java scan at 17 GB/s effective or more", rate >= 17e9, rate,
        "scan " + gbs(rate) + " against a measured one-thread bandwidth of " + gbs(bw));
    double worst = Double.NaN;
    String worstAt = "";
    for (Result r : results)
      if (r.bench().equals("RadiusBench") && r.p("searcher").equals("planner") && r.p("data").equals("uniform")
          && r.p("bits").equals("256") && r.p("n").equals("1000000") && Integer.parseInt(r.p("r")) <= 4) {
        Result scan = radiusScan(results.stream().filter(x -> x.bench().equals("RadiusBench")).toList(), r);
        double s = scan == null ? Double.NaN : scan.micros() / r.micros();
        if (!Double.isNaN(s) && (Double.isNaN(worst) || s < worst)) {
          worst = s;
          worstAt = "r=" + r.p("r");
        }
      }
    target(sb, "radius r <= 4 on uniform 256-bit codes: at least 50 x faster than the scan", worst >= 50, worst,
        "slowest measured radius (" + worstAt + "): " + ratio(worst) + " faster than the scan");
    double mem = fact(facts, "planner", in, "bytes_mem");
    target(sb, "at most 1/8 of the float memory per example, tables included", mem <= 4.0 * 256 / 8, mem,
        fmt(mem) + " bytes/example vs " + fmt(4.0 * 256) + " bytes of float32 activations (limit " + fmt(4.0 * 256 / 8) + ")");
    sb.append("- Lucene HNSW recall@10 against exact cosine: ").append(fmt(fact(facts, "hnsw", in, "recall_vs_cosine")))
        .append(" in distribution, ").append(fmt(fact(facts, "hnsw", ood, "recall_vs_cosine")))
        .append(" out of distribution (HNSW median ").append(fmt(micros(hnswOod))).append(" µs OOD); actindex is exact on both.\n");
  }

  /**
   * The targets of the index at real scale: {@code RealUseBench} scenarios (1M 256-bit codes, 10-NN,
   * in distribution) against the plain scan or the clean single segment of the same run, the worst
   * scenario on any query set against its scan, and {@code StoreBench}'s open and in-process build.
   */
  private static void realScaleTargets(StringBuilder sb, List<Result> results) {
    sb.append("\n### Targets at real scale (1M 256-bit codes, exact 10-NN; ratios within one run)\n\n");
    for (String data : List.of("dense", "relu")) {
      double scan = realUse(results, data, "in", "scan"), clean = realUse(results, data, "in", "clean");
      double filter = realUse(results, data, "in", "filter1"), tomb = realUse(results, data, "in", "tomb1");
      double segs = realUse(results, data, "in", "segments10");
      target(sb, data + ", in distribution: index at most 0.3 x plain scan", clean / scan <= 0.3, clean / scan,
          "index " + fmt(clean) + " µs vs scan " + fmt(scan) + " µs = " + ratio(clean / scan));
      target(sb, data + ": a 1% filter at most 0.1 x plain scan", filter / scan <= 0.1, filter / scan,
          "filtered " + fmt(filter) + " µs vs scan " + fmt(scan) + " µs = " + ratio(filter / scan));
      target(sb, data + ": one tombstone at most 1.1 x the clean index", tomb / clean <= 1.1, tomb / clean,
          fmt(tomb) + " µs vs " + fmt(clean) + " µs = " + ratio(tomb / clean));
      target(sb, data + ": ten segments at most 1.3 x one", segs / clean <= 1.3, segs / clean,
          fmt(segs) + " µs vs " + fmt(clean) + " µs = " + ratio(segs / clean));
    }
    double worst = Double.NaN;
    String worstAt = "";
    for (Result r : results) {
      if (!r.bench().equals("RealUseBench") || r.p("scenario").endsWith("scan")) continue;
      double v = r.micros() / realUse(results, r.p("data"), r.p("queries"), "scan");
      if (!Double.isNaN(v) && (Double.isNaN(worst) || v > worst)) {
        worst = v;
        worstAt = r.p("data") + ", " + r.p("queries") + ", " + r.p("scenario");
      }
    }
    target(sb, "never above 1.1 x the plain scan (worst measured scenario)", worst <= 1.1, worst, worstAt + ": " + ratio(worst));
    for (Result r : results) {
      if (!"1000000".equals(r.p("n"))) continue;
      if (r.bench().equals("StoreBench") && r.method().equals("open"))
        target(sb, r.p("data") + ": open of the 1M-code index at most 100 ms (warm)", r.micros() <= 100e3, r.micros(), fmt(r.micros() / 1e3) + " ms");
      if (r.bench().equals("Build"))
        target(sb, r.p("data") + ": build of 1M codes from .npy at most 5 s wall on 2 cores", r.micros() <= 5e6, r.micros(),
            fmt(r.micros() / 1e6) + " s in process (the command line adds the JVM's start)");
    }
  }

  /** Median µs of a {@code RealUseBench} scenario at 1M 256-bit codes, k = 10; NaN when not measured. */
  private static double realUse(List<Result> results, String data, String queries, String scenario) {
    Result r = first(results, x -> x.bench().equals("RealUseBench") && x.p("scenario").equals(scenario) && x.p("data").equals(data)
        && x.p("queries").equals(queries) && x.p("n").equals("1000000") && x.p("bits").equals("256") && x.p("k").equals("10"));
    return r == null ? Double.NaN : r.micros();
  }

  private static double fact(Map<String, Map<String, Double>> facts, String id, Map<String, String> key, String name) {
    return facts.getOrDefault(Facts.key(id, key), Map.of()).getOrDefault(name, Double.NaN);
  }

  private static void target(StringBuilder sb, String what, boolean met, double figure, String detail) {
    String verdict = Double.isNaN(figure) || Double.isInfinite(figure) ? "NOT MEASURED" : met ? "met" : "MISSED";
    sb.append("- ").append(what).append(": **").append(verdict).append("** — ").append(detail).append(".\n");
  }

  // ---- number formatting ----

  /** Three significant digits, thousands without separators; "–" for a missing value. */
  static String fmt(double v) {
    if (Double.isNaN(v) || Double.isInfinite(v)) return "–";
    double a = Math.abs(v);
    if (a >= 100) return String.format(Locale.ROOT, "%.0f", v);
    if (a >= 10) return String.format(Locale.ROOT, "%.1f", v);
    if (a >= 1) return String.format(Locale.ROOT, "%.2f", v);
    return String.format(Locale.ROOT, "%.3f", v);
  }

  static String ratio(double v) {
    return Double.isNaN(v) || Double.isInfinite(v) ? "–" : fmt(v) + "×";
  }

  static String gbs(double bytesPerSecond) {
    return Double.isNaN(bytesPerSecond) ? "–" : fmt(bytesPerSecond / 1e9) + " GB/s";
  }

  static String pct(double v) {
    return Double.isNaN(v) ? "–" : String.format(Locale.ROOT, "%.0f%%", 100 * v);
  }

  /** 100000 -> 100k, 1000000 -> 1M. */
  static String count(String n) {
    long v = Long.parseLong(n);
    if (v % 1_000_000 == 0) return v / 1_000_000 + "M";
    if (v % 1_000 == 0) return v / 1_000 + "k";
    return n;
  }

  /** A JMH figure: a JSON number, or a string such as "NaN" (JMH writes non-finite values so). */
  static double number(Object v) {
    if (v instanceof Number n) return n.doubleValue();
    if (v instanceof String str) return Double.parseDouble(str);
    return Double.NaN;
  }
}
