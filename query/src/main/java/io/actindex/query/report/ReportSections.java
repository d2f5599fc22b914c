package io.actindex.query.report;

import io.actindex.edge.EdgeBundle.Calibration;
import io.actindex.query.Compare;
import io.actindex.query.Dupes;
import io.actindex.query.OodCalibrate;
import io.actindex.query.OodCalibration;
import io.actindex.query.OodScorer;
import io.actindex.query.stats.Wasserstein;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;

/**
 * The report's optional parts, each drawn from a result another command computes: the stored
 * out-of-distribution calibration, a near-duplicate join, and a comparison of two samples.
 */
public final class ReportSections {
  private ReportSections() {}

  /**
   * The calibration scores, the threshold and how the scores spread; the summary numbers are those
   * {@code ood calibrate} printed ({@code r}, nearest-rank median); {@code live}'s message, when
   * the index changed since (or the calibration cannot tell), right under the heading's text.
   */
  public static void ood(HtmlPage page, OodCalibrate.Result r, OodCalibration.LiveCheck live) {
    Calibration c = r.calibration();
    boolean code = r.scoring().kind() == OodScorer.Kind.CODE;
    page.section("ood", "Out-of-distribution calibration",
        "The scores of the held-out in-distribution inputs 'ood calibrate' was given: the " + r.scoring().name(c.statistic())
            + " (k = " + c.k() + (code ? "" : ", among " + r.scoring().candidates() + " Hamming candidates") + ", layers: "
            + (c.layers().isEmpty() ? "all" : String.join(",", c.layers())) + "). Inputs scoring above the threshold are flagged out; "
            + "about " + String.format(java.util.Locale.ROOT, "%.0f", 100 * (1 - c.tpr())) + "% of in-distribution inputs are flagged too (false alarms).");
    if (live.standing() == OodCalibration.Standing.CHANGED) page.caution("Warning: " + live.message() + ".");
    else if (live.message() != null) page.note("Note: " + live.message() + ".");
    page.caution(OodCalibration.CAUTION);
    double[] s = c.scores();
    double lo = s.length == 0 ? 0 : s[0], hi = s.length == 0 ? 1 : s[s.length - 1];
    boolean integers = true;
    for (double v : s) integers &= v == Math.rint(v);
    double[] edges;
    if (integers && hi - lo <= 80) {
      edges = new double[(int) (hi - lo) + 2];
      for (int i = 0; i < edges.length; i++) edges[i] = lo - 0.5 + i;
    } else {
      edges = new double[31];
      double w = hi > lo ? (hi - lo) / 30 : 1;
      for (int i = 0; i <= 30; i++) edges[i] = lo + i * w;
    }
    double[] counts = new double[edges.length - 1], flagged = new double[edges.length - 1];
    List<String> bins = new ArrayList<>();
    for (int b = 0; b < counts.length; b++)
      bins.add("score " + (integers && hi - lo <= 80 ? HtmlPage.num(lo + b) : HtmlPage.num(edges[b]) + " to " + HtmlPage.num(edges[b + 1])));
    for (double v : s) {
      int b = 0;
      while (b < counts.length - 1 && v >= edges[b + 1]) b++;
      if (v > c.threshold()) flagged[b]++;
      else counts[b]++;
    }
    HtmlPage.Table t = new HtmlPage.Table("kv", 1, null)
        .row("calibration inputs", s.length)
        .row("threshold (flag out above)", c.threshold())
        .row("target share of in-distribution inputs accepted", c.tpr())
        .row("smallest score", lo)
        .row("median score", r.p50())
        .row("largest score", hi);
    page.chartWithTable(SvgChart.bars("Calibration scores (threshold " + HtmlPage.num(c.threshold()) + ")",
        code ? "score (bits)" : r.scoring().kind() == OodScorer.Kind.EUCLIDEAN ? "score (Euclidean distance)" : "score (cosine distance)",
        "calibration inputs", edges, bins, List.of(new SvgChart.Series("accepted (in)", null, counts),
            new SvgChart.Series("above the threshold", null, flagged)), false), t);
  }

  /**
   * The near-duplicate join's summary, the sizes of its listed groups and the groups themselves.
   * {@code anyLabel}/{@code anySplit}: whether some live example has a label/split; without, the
   * conflict/leakage rows say so instead of a 0 that would read as a finding.
   */
  public static void dupes(HtmlPage page, Dupes.Result r, boolean anyLabel, boolean anySplit) {
    Dupes.Summary s = r.summary();
    page.section("dupes", "Near-duplicates to the model (radius " + s.radius() + ")",
        "Pairs of examples whose codes differ in at most " + HtmlPage.count(s.radius(), "neuron") + ", joined into groups. A group across splits is a "
            + "leak (the model cannot tell a test example from a training one); a group with several labels is a label conflict. "
            + "Flags tell where to look, not a verdict.");
    HtmlPage.Table t = new HtmlPage.Table("kv", 1, null)
        .row("examples joined", s.examples())
        .row("pairs within the radius", s.pairs())
        .row("exact duplicate pairs (distance 0)", s.exactDuplicatePairs())
        .row("groups", s.groups())
        .row("largest group", s.largestGroup())
        .row("examples in groups", s.examplesInGroups())
        .row("groups spanning splits (leakage)", anySplit ? s.crossSplitGroups() : "no live example has a split")
        .row("groups with conflicting labels", anyLabel ? s.conflictingGroups() : "no live example has a label");
    int maxBucket = 0;
    for (Dupes.Group g : r.groups()) maxBucket = Math.max(maxBucket, bucket(g.size()));
    double[] edges = new double[maxBucket + 2], counts = new double[maxBucket + 1];
    for (int i = 0; i < edges.length; i++) edges[i] = i - 0.5;
    for (Dupes.Group g : r.groups()) counts[bucket(g.size())]++;
    List<String> sizes = new ArrayList<>();
    for (int k = 0; k <= maxBucket; k++) sizes.add("groups of " + (1 << (k + 1)) + "-" + ((1 << (k + 2)) - 1) + " examples");
    page.chartWithTable(SvgChart.bars("The " + HtmlPage.count(r.groups().size(), "listed group") + " (of " + s.groups() + ") by size", "size bucket k (2^(k+1) to 2^(k+2)-1 examples)",
        "groups listed", edges, sizes, List.of(new SvgChart.Series("groups", null, counts)), false), t);
    HtmlPage.Table groups = new HtmlPage.Table(null, 4, List.of("flags", "labels", "splits", "keys (first members)", "size", "codes", "max distance"));
    for (Dupes.Group g : r.groups()) {
      List<String> keys = new ArrayList<>();
      for (Dupes.Member m : g.members()) if (keys.size() < 6) keys.add(m.key());
      String flags = (g.crossSplit() ? "leak " : "") + (g.conflictingLabels() ? "conflict" : "");
      String shown = String.join(" ", keys) + (g.size() > keys.size() ? " … and " + (g.size() - keys.size()) + " more" : "");
      groups.row(flags.trim(), counts(g.labels()), counts(g.splits()), shown, g.size(), g.distinctCodes(), g.maxDistance());
    }
    page.paragraph("The largest " + (r.groups().size() == 1 ? "group" : "groups") + " (" + r.groups().size() + " of " + s.groups() + " listed):");
    page.table(groups);
  }

  /** Group size bucket: 0 for 2-3 examples, 1 for 4-7, k for 2^(k+1) to 2^(k+2)-1. */
  static int bucket(int size) {
    return Math.max(0, 31 - Integer.numberOfLeadingZeros(size) - 1);
  }

  private static String counts(Map<String, Integer> m) {
    List<String> parts = new ArrayList<>();
    m.forEach((k, v) -> parts.add(k + ":" + v));
    return String.join(" ", parts);
  }

  /** Two samples compared in code space: the tests, per layer, and the neurons that moved most. */
  public static void compare(HtmlPage page, Compare.Result r) {
    page.section("compare", "Two samples compared", "A: " + r.describeA() + " (" + HtmlPage.count(r.rowsA(), "row") + "); B: " + r.describeB() + " ("
        + HtmlPage.count(r.rowsB(), "row") + "). " + r.verdict());
    HtmlPage.Table tests = new HtmlPage.Table(null, 1, List.of("statistic", "value", "p-value", "rows A", "rows B"));
    for (Compare.Mmd m : r.mmd()) tests.row("MMD^2, " + m.kernel() + " kernel", m.mmd2(), m.pValue(), m.rowsA(), m.rowsB());
    if (r.w2() != null)
      tests.row(r.w2().method() == Wasserstein.Method.EXACT ? "W2 with Hamming ground cost (bits, exact)"
          : "W2 with Hamming ground cost (bits, Sinkhorn: an upper bound)", r.w2().w2(), null, r.w2().rowsA(), r.w2().rowsB());
    page.table(tests);
    List<Compare.Neuron> top = r.neurons();
    double[] edges = new double[top.size() + 1], a = new double[top.size()], b = new double[top.size()];
    for (int i = 0; i <= top.size(); i++) edges[i] = i + 0.5;
    HtmlPage.Table t = new HtmlPage.Table(null, 1, List.of("rank", "neuron", "rate A", "rate B", "z", "q-value"));
    List<String> ranks = new ArrayList<>();
    for (int i = 0; i < top.size(); i++) {
      ranks.add("rank " + (i + 1) + " (" + top.get(i).name() + ")");
      a[i] = top.get(i).rateA();
      b[i] = top.get(i).rateB();
      t.row(Integer.toString(i + 1), top.get(i).name(), top.get(i).rateA(), top.get(i).rateB(), top.get(i).z(), top.get(i).q());
    }
    page.chartWithTable(SvgChart.shareBars("Neurons whose firing rates moved most", "rank (see table for the neuron)", "firing rate", edges, ranks,
        List.of(new SvgChart.Series("A", null, a), new SvgChart.Series("B", null, b))), t);
    page.note("Multiple testing: " + r.correction() + ". A small p-value says the samples differ in code space more than chance "
        + "explains, not that the difference matters for the model's decisions.");
  }
}
