package io.actindex.query.report;

import io.actindex.query.OodCalibration;
import io.actindex.query.OodEval;
import io.actindex.query.RocMetrics;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;

/**
 * The self-contained HTML page of {@code ood eval}: the caution, the metrics of every score side
 * by side, the ROC curves, the in and out histograms of each score, and the breakdown of code-score
 * variants. Inline SVG ({@link SvgChart}) and inline CSS only: no script, no network.
 */
public final class EvalPage {
  private EvalPage() {}

  public static String render(String title, OodEval.Result r) {
    List<OodEval.Scored> scores = r.scores();
    StringBuilder h = new StringBuilder();
    h.append("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>").append(SvgChart.escape(title)).append("</title>\n");
    h.append("<style>body{font-family:sans-serif;max-width:1100px;margin:1em auto;color:#222}table{border-collapse:collapse;margin:.5em 0}"
        + "td,th{border:1px solid #bbb;padding:3px 8px;text-align:right}th{background:#eef2f4}td.l,th.l{text-align:left}"
        + ".caution{border-left:4px solid #c8553d;padding:.4em .8em;background:#fbf1ee}svg{margin:4px}</style></head><body>\n");
    h.append("<h1>").append(SvgChart.escape(title)).append("</h1>\n<p class=\"caution\">").append(SvgChart.escape(OodCalibration.CAUTION))
        .append("</p>\n");
    h.append("<p>").append(r.code().metrics().nIn()).append(" in-distribution and ").append(r.code().metrics().nOut())
        .append(" out-of-distribution inputs. Higher scores mean further from the training data; AUROC is the chance that an out input "
            + "scores above an in input; FPR at 95% TPR is the share of out inputs accepted when 95% of in inputs are accepted.</p>\n");
    h.append("<table><tr><th class=\"l\">score</th><th>AUROC</th><th>FPR at 95% TPR</th><th>AUPR (in positive)</th><th>AUPR (out positive)</th>"
        + "<th class=\"l\">what it is</th></tr>\n");
    for (OodEval.Scored s : scores) {
      RocMetrics m = s.metrics();
      h.append("<tr><td class=\"l\">").append(SvgChart.escape(s.name())).append("</td><td>").append(f(m.auroc())).append("</td><td>")
          .append(f(m.fprAt95Tpr())).append("</td><td>").append(f(m.auprIn())).append("</td><td>").append(f(m.auprOut()))
          .append("</td><td class=\"l\">").append(SvgChart.escape(s.description())).append("</td></tr>\n");
    }
    h.append("</table>\n");
    List<SvgChart.Series> roc = new ArrayList<>();
    for (OodEval.Scored s : scores) {
      List<RocMetrics.Point> pts = s.metrics().roc();
      double[] x = new double[pts.size()], y = new double[pts.size()];
      for (int i = 0; i < x.length; i++) {
        x[i] = pts.get(i).falseAlarmRate();
        y[i] = pts.get(i).detectionRate();
      }
      roc.add(new SvgChart.Series(s.name(), x, y));
    }
    h.append("<div>").append(SvgChart.lines("ROC curves", "false alarm rate (in inputs flagged out)", "detection rate (out inputs flagged out)",
        roc, false, false));
    for (OodEval.Scored s : scores) h.append(histogram(s));
    h.append("</div>\n<h2>Code-score variants</h2>\n<table><tr><th>k</th><th class=\"l\">statistic</th><th class=\"l\">layers</th><th>AUROC</th>"
        + "<th>FPR at 95% TPR</th></tr>\n");
    for (OodEval.Variant v : r.variants())
      h.append("<tr><td>").append(v.k()).append("</td><td class=\"l\">").append(v.statistic().label).append("</td><td class=\"l\">")
          .append(SvgChart.escape(v.layers().isEmpty() ? "all" : String.join(",", v.layers()))).append("</td><td>").append(f(v.auroc()))
          .append("</td><td>").append(f(v.fprAt95Tpr())).append("</td></tr>\n");
    return h.append("</table>\n</body></html>\n").toString();
  }

  /**
   * In and out histograms of one score: one bin per value for integer scores with few values, else 30
   * equal bins. Infinite scores (rows past float32, {@code QuerySource.Queries#farRows}) have no bin:
   * the axis label counts them; shares stay shares of all inputs.
   */
  static String histogram(OodEval.Scored s) {
    double lo = Double.POSITIVE_INFINITY, hi = Double.NEGATIVE_INFINITY;
    boolean integers = true;
    int infinite = 0;
    for (double[] a : new double[][] {s.in(), s.out()})
      for (double v : a) {
        if (Double.isInfinite(v)) {
          infinite++;
          continue;
        }
        lo = Math.min(lo, v);
        hi = Math.max(hi, v);
        integers &= v == Math.rint(v);
      }
    if (lo > hi) lo = hi = 0; // every score infinite: empty bins
    double[] edges;
    if (integers && hi - lo <= 60) {
      edges = new double[(int) (hi - lo) + 2];
      for (int i = 0; i < edges.length; i++) edges[i] = lo - 0.5 + i;
    } else {
      int bins = 30;
      double width = hi > lo ? (hi - lo) / bins : 1;
      edges = new double[bins + 1];
      for (int i = 0; i <= bins; i++) edges[i] = lo + i * width;
    }
    String axis = s.name() + " score" + (infinite == 0 ? "" : " (" + infinite + " infinite, past float32, not shown)");
    return SvgChart.shareBars("Histogram: " + s.name() + " score", axis, "share of inputs", edges, null,
        List.of(new SvgChart.Series("in", null, shares(s.in(), edges)), new SvgChart.Series("out", null, shares(s.out(), edges))));
  }

  static double[] shares(double[] values, double[] edges) {
    double[] h = new double[edges.length - 1];
    for (double v : values) {
      if (Double.isInfinite(v)) continue;
      int b = Arrays.binarySearch(edges, v);
      b = b >= 0 ? b : -b - 2;
      h[Math.max(0, Math.min(h.length - 1, b))]++;
    }
    for (int i = 0; i < h.length; i++) h[i] /= values.length;
    return h;
  }

  private static String f(double v) {
    return String.format(Locale.ROOT, "%.4f", v);
  }
}
