package io.actindex.query.report;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.index.mih.NearestOthers;
import io.actindex.index.store.IndexInfo;
import io.actindex.index.store.IndexReader;
import io.actindex.query.Census;
import io.actindex.query.IndexBuilder;
import io.actindex.query.Parallel;
import io.actindex.query.Progress;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;

/**
 * The parts of the {@code report} page that every index has: what it holds, how its examples
 * spread over linear regions (per layer prefix), how often each neuron fires, how far each example
 * lies from its nearest other example (by split), and how pure the regions' labels are. Each part
 * is a chart with the table of its numbers. Parts that need more (out-of-distribution calibration,
 * near-duplicates, a comparison) are added by {@link ReportSections}.
 */
public final class IndexReport {
  private IndexReport() {}

  /**
   * The numbers behind the page: the census, and for every live example its distance to the
   * nearest other live example and its split (null when it has none).
   */
  public record Facts(int examples, Census.Result census, int[] nearestOther, String[] splits) {}

  /** For each code, the Hamming distance to its nearest other code of the block (-1 if it is alone). Exact. One thread. */
  public static int[] nearestOther(CodeBlock codes, Progress progress) {
    return nearestOther(codes, 1, progress);
  }

  /**
   * As {@link #nearestOther(CodeBlock, Progress)} on up to {@code threads} threads ({@link
   * NearestOthers}: the searches grouped, the groups' tasks run in any order, so the answer does not
   * depend on {@code threads}). Progress counts codes, in proportion to the tasks done.
   */
  public static int[] nearestOther(CodeBlock codes, int threads, Progress progress) {
    int n = codes.size();
    if (n == 0) return new int[0];
    NearestOthers all = NearestOthers.of(codes);
    Progress p = progress == null ? Progress.NONE : progress;
    int tasks = all.tasks();
    Parallel.forEach(tasks, threads, (done, total) -> p.update(done * n / total, n), all::run);
    return all.result();
  }

  /** Renders the page's fixed sections into {@code page}. */
  public static void render(HtmlPage page, IndexReader reader, Facts f) {
    IndexInfo info = reader.info();
    if (f.examples() == 0)
      page.note("The index holds no live examples (" + (info.nextId() - info.liveCount()) + " deleted): the sections below have nothing to count.");
    overview(page, reader, info);
    regions(page, f.census());
    neurons(page, f.census());
    nearestOther(page, f);
    purity(page, f.census());
  }

  private static void overview(HtmlPage page, IndexReader reader, IndexInfo info) {
    page.section("overview", "What the index holds", "Each example is stored as the on/off pattern of the network's hidden neurons "
        + "(1 bit per neuron), which names the linear region of the network the example falls in.");
    CodeLayout layout = info.layout();
    List<String> layers = new ArrayList<>();
    for (CodeLayout.Segment seg : layout.segments()) layers.add(seg.name() + " (" + HtmlPage.count(seg.bits(), "bit") + ")");
    int deleted = info.nextId() - info.liveCount();
    HtmlPage.Table t = new HtmlPage.Table("kv", 2, null)
        .row("folder", reader.dir().toString())
        .row("layers", String.join(", ", layers))
        .row("bits per example", String.valueOf(layout.bits()))
        .row("live examples", String.valueOf(info.liveCount()))
        .row("deleted examples", String.valueOf(deleted))
        .row("segments", String.valueOf(info.segments().size()))
        .row("bytes on disk", String.valueOf(info.bytesOnDisk()))
        .row("bytes on disk per live example", info.liveCount() == 0 ? "n/a" : HtmlPage.num(info.bytesOnDisk() / (double) info.liveCount()));
    for (Map.Entry<String, String> e : new TreeMap<>(reader.properties()).entrySet())
      if (e.getKey().startsWith("build.")) // 0 kept magnitudes said in info's words
        t.row(e.getKey(), e.getKey().equals(IndexBuilder.MAGNITUDES) && e.getValue().equals("0") ? "none kept" : e.getValue());
    page.table(t);
  }

  private static void regions(HtmlPage page, Census.Result census) {
    page.section("regions", "Examples per linear region",
        "A region of a layer prefix is one distinct code on those layers. Bucket k of the histogram holds the regions with "
            + "2^(k-1)+1 to 2^k examples (bucket 0: one example). Many singletons mean the index sees mostly unique patterns; "
            + "a few huge regions mean the network lumps many inputs together.");
    int buckets = 0;
    for (Census.Prefix p : census.prefixes())
      for (Census.Bucket b : p.histogram()) buckets = Math.max(buckets, bucketIndex(b.max()) + 1);
    double[] edges = new double[buckets + 1];
    for (int i = 0; i <= buckets; i++) edges[i] = i - 0.5;
    List<SvgChart.Series> series = new ArrayList<>();
    List<String> header = new ArrayList<>(List.of("examples per region"));
    for (Census.Prefix p : census.prefixes()) {
      double[] y = new double[buckets];
      for (int b = 0; b < p.histogram().size(); b++) y[bucketIndex(p.histogram().get(b).max())] = p.histogram().get(b).regions();
      series.add(new SvgChart.Series(prefixName(p), null, y));
      header.add("regions, " + prefixName(p));
    }
    HtmlPage.Table t = new HtmlPage.Table(null, 1, header);
    List<String> names = new ArrayList<>();
    for (int b = 0; b < buckets; b++) {
      Object[] row = new Object[census.prefixes().size() + 1];
      int lo = b == 0 ? 1 : (1 << (b - 1)) + 1, hi = 1 << b;
      row[0] = lo == hi ? Integer.toString(lo) : lo + "-" + hi;
      names.add("regions of " + (lo == hi ? HtmlPage.count(lo, "example") : row[0] + " examples"));
      for (int pi = 0; pi < census.prefixes().size(); pi++) row[pi + 1] = (long) series.get(pi).y()[b];
      t.row(row);
    }
    page.chartWithTable(SvgChart.bars("Regions by size, per layer prefix", "size bucket k (2^(k-1)+1 to 2^k examples)",
        "regions (log scale)", edges, names, series, true), t);
  }

  /** The histogram bucket of a region of {@code max} examples: 0 for 1, k for 2^(k-1)+1..2^k. */
  static int bucketIndex(int max) {
    return max <= 1 ? 0 : 32 - Integer.numberOfLeadingZeros(max - 1);
  }

  static String prefixName(Census.Prefix p) {
    return String.join("+", p.layers());
  }

  private static void neurons(HtmlPage page, Census.Result census) {
    page.section("neurons", "How often each neuron fires",
        "The share of live examples for which each hidden unit is on. A unit never on (or always on) over these examples carries no "
            + "information about them; the index drops such bits from its tables and adds their constant share back. It may still fire "
            + "(or not) on new inputs: the note under the table bounds how often.");
    HtmlPage.Table summary = new HtmlPage.Table(null, 1, List.of("layer", "units", "mean firing rate", "dead", "always on", "dead units", "always-on units"));
    for (Census.Neurons n : census.neurons()) {
      double mean = 0;
      for (double r : n.firingRates()) mean += r;
      mean = n.firingRates().length == 0 ? 0 : mean / n.firingRates().length;
      if (census.tooFewToCall()) summary.row(n.layer(), n.firingRates().length, mean, "n/a", "n/a", "", "");
      else summary.row(n.layer(), n.firingRates().length, mean, n.dead().size(), n.alwaysOn().size(), abbreviate(n.dead()), abbreviate(n.alwaysOn()));
    }
    for (Census.Neurons n : census.neurons()) {
      double[] rates = n.firingRates();
      double[] edges = new double[rates.length + 1];
      for (int i = 0; i <= rates.length; i++) edges[i] = i - 0.5;
      List<String> units = new ArrayList<>();
      for (int i = 0; i < rates.length; i++) units.add(n.layer() + ":" + i);
      page.raw("<figure style=\"margin:0\">" + SvgChart.shareBars("Layer " + n.layer() + ": firing rate per unit", "unit (0-based, layer " + n.layer() + ")",
          "share of examples with the unit on", edges, units, List.of(new SvgChart.Series("firing rate", null, rates))) + "</figure>\n");
    }
    page.table(summary);
    if (census.deadNote() != null) page.note(census.deadNote());
  }

  private static String abbreviate(List<String> units) {
    if (units.size() <= 12) return String.join(" ", units);
    return String.join(" ", units.subList(0, 12)) + " ... (" + units.size() + " in all)";
  }

  private static void nearestOther(HtmlPage page, Facts f) {
    page.section("nearest-other", "Distance to the nearest other example",
        "For every live example, the Hamming distance (flipped neurons, all layers) to its nearest other live example, by split. "
            + "Distance 0 means another example shares its region exactly: a duplicate to the model.");
    TreeMap<String, int[]> bySplit = new TreeMap<>();
    int max = 0;
    for (int d : f.nearestOther()) max = Math.max(max, d);
    for (int i = 0; i < f.nearestOther().length; i++) {
      if (f.nearestOther()[i] < 0) continue;
      String s = f.splits()[i] == null ? "(no split)" : f.splits()[i];
      bySplit.computeIfAbsent(s, k -> new int[0]);
      int[] h = bySplit.get(s);
      if (h.length <= max) bySplit.put(s, h = java.util.Arrays.copyOf(h, max + 1));
      h[f.nearestOther()[i]]++;
    }
    double[] edges = new double[max + 2];
    for (int i = 0; i < edges.length; i++) edges[i] = i - 0.5;
    List<String> distances = new ArrayList<>();
    for (int d = 0; d <= max; d++) distances.add("distance " + HtmlPage.count(d, "bit"));
    List<SvgChart.Series> series = new ArrayList<>();
    List<String> header = new ArrayList<>(List.of("distance"));
    for (Map.Entry<String, int[]> e : bySplit.entrySet()) {
      double total = 0;
      for (int c : e.getValue()) total += c;
      double[] y = new double[max + 1];
      for (int d = 0; d <= max; d++) y[d] = e.getValue()[d] / total;
      series.add(new SvgChart.Series(e.getKey(), null, y));
      header.add(e.getKey() + " (examples)");
    }
    HtmlPage.Table t = new HtmlPage.Table(null, 0, header);
    for (int d = 0; d <= max; d++) {
      Object[] row = new Object[bySplit.size() + 1];
      row[0] = d;
      int c = 1, any = 0;
      for (int[] h : bySplit.values()) {
        row[c++] = h[d];
        any += h[d];
      }
      if (any > 0) t.row(row); // distances no example has are left out of the table
    }
    page.chartWithTable(SvgChart.shareBars("Nearest other example, by split", "Hamming distance (bits)", "share of the split's examples", edges,
        distances, series), t);
    int alone = 0;
    for (int d : f.nearestOther()) if (d < 0) alone++;
    if (alone > 0) page.note(HtmlPage.count(alone, "live example") + (alone == 1 ? " has" : " have") + " no other live example to be measured against (left out above).");
  }

  private static void purity(HtmlPage page, Census.Result census) {
    page.section("purity", "Label purity of regions",
        "The share of labelled examples that carry their region's majority label, for each layer prefix. 1 means every region holds "
            + "one label; lower values mean the network puts differently labelled examples in the same region. An example with no other "
            + "labelled example in its region (labelled alone) counts as pure whatever its label, so where most are alone purity is high "
            + "even for random labels: purity where shared counts only the regions that hold two or more labelled examples.");
    List<Census.Prefix> prefixes = census.prefixes();
    double[] bits = new double[prefixes.size()], y = new double[prefixes.size()];
    HtmlPage.Table t = new HtmlPage.Table(null, 1, List.of("layers", "bits", "regions", "singletons", "median examples per region", "purity", "labelled alone",
        "purity where shared"));
    for (int i = 0; i < prefixes.size(); i++) {
      Census.Prefix p = prefixes.get(i);
      bits[i] = p.bits();
      y[i] = p.purity() == null ? Double.NaN : p.purity();
      t.row(prefixName(p), p.bits(), p.regions(), p.singletons(), p.quantiles() == null ? null : p.quantiles().p50(),
          // null purity: no live example carries a label (labelled ones may have been deleted: nothing records that they were)
          p.purity() == null ? "no live example has a label" : HtmlPage.num(p.purity()),
          p.labelledAlone() == null ? null : HtmlPage.num(p.labelledAlone()), p.purityShared() == null ? null : HtmlPage.num(p.purityShared()));
    }
    String svg = SvgChart.shareLines("Label purity as layers are added", "bits of the layer prefix", "purity (share with the majority label)",
        List.of(new SvgChart.Series("purity", bits, y)));
    page.chartWithTable(svg, t);
  }
}
