package io.actindex.query.report;

import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * Small self-contained SVG charts for the HTML pages the tool writes (no script, no network, no
 * fonts beyond the viewer's sans-serif): line charts and histograms with one or more series, linear
 * or logarithmic axes. Labels are XML-escaped. Degenerate data is drawn, not refused: no data gives
 * an empty frame saying so, a single value or a single bar gets a padded range, and on a log axis
 * values {@code <= 0} are left out (a line breaks there, a bar has no height) and a note under the
 * chart says how many were left out. Bars on a log axis rise from a power of ten below their
 * smallest value, so every positive bar, a count of 1 included, has a height.
 *
 * <pre>{@code
 * String svg = SvgChart.lines("ROC", "false alarm rate", "detection rate",
 *     List.of(new SvgChart.Series("code score", fpr, tpr)), false, false);
 * }</pre>
 */
public final class SvgChart {
  private SvgChart() {}

  /** One named series; for {@link #bars} only {@code y} is used (one value per bin). */
  public record Series(String name, double[] x, double[] y) {
    public Series {
      if (x != null && x.length != y.length) throw new IllegalArgumentException("series " + name + ": x and y differ in length");
    }
  }

  static final int W = 520, H = 320, LEFT = 64, RIGHT = 16, TOP = 34, BOTTOM = 52;
  private static final String[] COLORS = {"#1b6f8a", "#c8553d", "#5b8c2a", "#7a4e9c", "#b08800"};

  /** A line chart of the series (points joined in the order given). */
  public static String lines(String title, String xLabel, String yLabel, List<Series> series, boolean logX, boolean logY) {
    return lines(title, xLabel, yLabel, series, new Axis(logX), new Axis(logY));
  }

  /** A line chart of shares: as {@link #lines}, with a y axis that never leaves [0, 1], even around one repeated value. */
  public static String shareLines(String title, String xLabel, String yLabel, List<Series> series) {
    return lines(title, xLabel, yLabel, series, new Axis(false), Axis.share());
  }

  private static String lines(String title, String xLabel, String yLabel, List<Series> series, Axis x, Axis y) {
    for (Series s : series)
      for (int i = 0; i < s.y().length; i++) {
        double xv = s.x() == null ? i : s.x()[i];
        if (x.usable(xv) && y.usable(s.y()[i])) {
          x.include(xv);
          y.include(s.y()[i]);
        } else {
          x.dropped++;
        }
      }
    StringBuilder svg = open(title);
    if (x.empty()) return close(svg, "no data", 0);
    x.finish();
    y.finish();
    frame(svg, x, y, xLabel, yLabel);
    for (int si = 0; si < series.size(); si++) {
      Series s = series.get(si);
      StringBuilder path = new StringBuilder();
      boolean pen = false;
      for (int i = 0; i < s.y().length; i++) {
        double xv = s.x() == null ? i : s.x()[i], yv = s.y()[i];
        if (!x.usable(xv) || !y.usable(yv)) {
          pen = false;
          continue;
        }
        path.append(pen ? " L" : " M").append(fmt(px(x, xv))).append(' ').append(fmt(py(y, yv)));
        pen = true;
      }
      svg.append("<path fill=\"none\" stroke-width=\"2\" stroke=\"").append(color(si)).append("\" d=\"").append(path.toString().trim())
          .append("\"/>\n");
    }
    legend(svg, series);
    return close(svg, null, x.dropped);
  }

  /**
   * A histogram: bins {@code [edges[i], edges[i+1])}, one bar group per bin with one bar per
   * series ({@code y[i]} = count or share of bin i).
   */
  public static String bars(String title, String xLabel, String yLabel, double[] edges, List<Series> series, boolean logY) {
    return bars(title, xLabel, yLabel, edges, null, series, new Axis(logY));
  }

  /**
   * As {@link #bars}, with a name per bin for each bar's tooltip ("name, series: value"); null
   * names a bin by its edges ("a to b").
   */
  public static String bars(String title, String xLabel, String yLabel, double[] edges, List<String> binNames, List<Series> series, boolean logY) {
    return bars(title, xLabel, yLabel, edges, binNames, series, new Axis(logY));
  }

  /** A histogram of shares: as {@link #bars} on a linear axis that never leaves [0, 1] (all-zero bars included). */
  public static String shareBars(String title, String xLabel, String yLabel, double[] edges, List<String> binNames, List<Series> series) {
    return bars(title, xLabel, yLabel, edges, binNames, series, Axis.share());
  }

  private static String bars(String title, String xLabel, String yLabel, double[] edges, List<String> binNames, List<Series> series, Axis y) {
    Axis x = new Axis(false);
    boolean logY = y.log;
    int bins = Math.max(0, edges.length - 1);
    if (binNames != null && binNames.size() != bins) throw new IllegalArgumentException(binNames.size() + " bin names, edges give " + bins + " bins");
    for (Series s : series)
      if (s.y().length != bins) throw new IllegalArgumentException("series " + s.name() + " has " + s.y().length + " bins, edges give " + bins);
    StringBuilder svg = open(title);
    if (bins == 0 || series.isEmpty()) return close(svg, "no data", 0);
    x.include(edges[0]);
    x.include(edges[bins]);
    if (!logY) y.include(0);
    for (Series s : series) for (double v : s.y()) if (y.usable(v)) y.include(v); else y.dropped++;
    if (y.empty()) y.include(1);
    if (logY) y.include(y.lo / 2); // the base lies below the smallest bar (not at it), so a bar of the smallest value has a height
    x.finish();
    y.finish();
    frame(svg, x, y, xLabel, yLabel);
    double base = py(y, y.lo);
    for (int b = 0; b < bins; b++) {
      double x0 = px(x, edges[b]), x1 = px(x, edges[b + 1]);
      double width = Math.max(1, (x1 - x0 - 2) / series.size());
      String bin = binNames != null ? binNames.get(b) : num(edges[b]) + " to " + num(edges[b + 1]);
      for (int si = 0; si < series.size(); si++) {
        double v = series.get(si).y()[b];
        if (!y.usable(v)) continue;
        double top = py(y, v);
        svg.append("<rect fill=\"").append(color(si)).append("\" fill-opacity=\"0.8\" x=\"").append(fmt(x0 + 1 + si * width))
            .append("\" y=\"").append(fmt(Math.min(top, base))).append("\" width=\"").append(fmt(width)).append("\" height=\"")
            .append(fmt(Math.abs(base - top))).append("\"><title>").append(escape(bin + ", " + series.get(si).name())).append(": ")
            .append(num(v)).append("</title></rect>\n");
      }
    }
    legend(svg, series);
    return close(svg, null, y.dropped);
  }

  /** XML escaping for text and attribute values. */
  public static String escape(String s) {
    if (s == null) return "";
    StringBuilder b = new StringBuilder(s.length());
    for (int i = 0; i < s.length(); i++) {
      char c = s.charAt(i);
      switch (c) {
        case '<' -> b.append("&lt;");
        case '>' -> b.append("&gt;");
        case '&' -> b.append("&amp;");
        case '"' -> b.append("&quot;");
        case '\'' -> b.append("&#39;");
        default -> {
          if (c < 0x20 && c != '\t' && c != '\n') b.append('?'); // not allowed in XML 1.0
          else b.append(c);
        }
      }
    }
    return b.toString();
  }

  /** One axis: its range, linear or log10; a linear axis of shares is kept within [0, 1]. */
  static final class Axis {
    final boolean log;
    double lo = Double.POSITIVE_INFINITY, hi = Double.NEGATIVE_INFINITY;
    double min = Double.NEGATIVE_INFINITY, max = Double.POSITIVE_INFINITY;
    int dropped;

    Axis(boolean log) {
      this.log = log;
    }

    /** A linear axis for shares: padding around a single value stops at 0 and 1. */
    static Axis share() {
      Axis a = new Axis(false);
      a.min = 0;
      a.max = 1;
      return a;
    }

    boolean usable(double v) {
      return Double.isFinite(v) && (!log || v > 0);
    }

    void include(double v) {
      lo = Math.min(lo, v);
      hi = Math.max(hi, v);
    }

    boolean empty() {
      return lo > hi;
    }

    void finish() {
      if (log) {
        lo = Math.pow(10, Math.floor(Math.log10(lo)));
        hi = Math.pow(10, Math.ceil(Math.log10(hi)));
        if (hi <= lo) hi = lo * 10;
      } else if (hi <= lo) {
        double pad = lo == 0 ? 1 : Math.abs(lo) * 0.5;
        lo -= pad;
        hi += pad;
      }
      if (!log && lo < min && min < hi) lo = min;
      if (!log && hi > max && max > lo) hi = max;
    }

    double frac(double v) {
      return log ? (Math.log10(v) - Math.log10(lo)) / (Math.log10(hi) - Math.log10(lo)) : (v - lo) / (hi - lo);
    }

    List<Double> ticks() {
      List<Double> t = new ArrayList<>();
      if (log) {
        for (double v = lo; v <= hi * 1.0001; v *= 10) t.add(v);
        return t;
      }
      double step = Math.pow(10, Math.floor(Math.log10((hi - lo) / 4)));
      if ((hi - lo) / step > 10) step *= 2.5;
      if ((hi - lo) / step > 10) step *= 2;
      for (double v = Math.ceil(lo / step) * step; v <= hi + step * 1e-9; v += step) t.add(Math.abs(v) < step * 1e-9 ? 0 : v);
      return t;
    }
  }

  private static double px(Axis x, double v) {
    return LEFT + x.frac(v) * (W - LEFT - RIGHT);
  }

  private static double py(Axis y, double v) {
    return H - BOTTOM - y.frac(v) * (H - TOP - BOTTOM);
  }

  private static StringBuilder open(String title) {
    StringBuilder svg = new StringBuilder();
    svg.append("<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 ").append(W).append(' ').append(H).append("\" width=\"").append(W)
        .append("\" height=\"").append(H).append("\" font-family=\"sans-serif\" font-size=\"11\" role=\"img\">\n<title>").append(escape(title))
        .append("</title>\n<text x=\"").append(W / 2).append("\" y=\"18\" text-anchor=\"middle\" font-size=\"13\">").append(escape(title))
        .append("</text>\n");
    return svg;
  }

  private static String close(StringBuilder svg, String message, int dropped) {
    if (message != null)
      svg.append("<rect x=\"").append(LEFT).append("\" y=\"").append(TOP).append("\" width=\"").append(W - LEFT - RIGHT).append("\" height=\"")
          .append(H - TOP - BOTTOM).append("\" fill=\"none\" stroke=\"#999\"/>\n<text x=\"").append(W / 2).append("\" y=\"").append(H / 2)
          .append("\" text-anchor=\"middle\" fill=\"#666\">").append(escape(message)).append("</text>\n");
    if (dropped > 0)
      svg.append("<text x=\"").append(LEFT).append("\" y=\"").append(H - 4).append("\" fill=\"#666\">").append(dropped)
          .append(dropped == 1 ? " value" : " values").append(" not shown (not finite, or not positive on a log axis)</text>\n");
    return svg.append("</svg>\n").toString();
  }

  private static void frame(StringBuilder svg, Axis x, Axis y, String xLabel, String yLabel) {
    int x0 = LEFT, x1 = W - RIGHT, y0 = H - BOTTOM, y1 = TOP;
    svg.append("<rect x=\"").append(x0).append("\" y=\"").append(y1).append("\" width=\"").append(x1 - x0).append("\" height=\"").append(y0 - y1)
        .append("\" fill=\"none\" stroke=\"#999\"/>\n");
    for (double t : x.ticks()) {
      double p = px(x, t);
      svg.append("<line x1=\"").append(fmt(p)).append("\" y1=\"").append(y0).append("\" x2=\"").append(fmt(p)).append("\" y2=\"").append(y0 + 4)
          .append("\" stroke=\"#999\"/><text x=\"").append(fmt(p)).append("\" y=\"").append(y0 + 16).append("\" text-anchor=\"middle\">")
          .append(num(t)).append("</text>\n");
    }
    for (double t : y.ticks()) {
      double p = py(y, t);
      svg.append("<line x1=\"").append(x0 - 4).append("\" y1=\"").append(fmt(p)).append("\" x2=\"").append(x0).append("\" y2=\"").append(fmt(p))
          .append("\" stroke=\"#999\"/><text x=\"").append(x0 - 6).append("\" y=\"").append(fmt(p + 4)).append("\" text-anchor=\"end\">")
          .append(num(t)).append("</text>\n");
    }
    svg.append("<text x=\"").append((x0 + x1) / 2).append("\" y=\"").append(y0 + 32).append("\" text-anchor=\"middle\">").append(escape(xLabel))
        .append("</text>\n<text transform=\"translate(14 ").append((y0 + y1) / 2).append(") rotate(-90)\" text-anchor=\"middle\">")
        .append(escape(yLabel)).append("</text>\n");
  }

  private static void legend(StringBuilder svg, List<Series> series) {
    int y = TOP + 14;
    for (int i = 0; i < series.size(); i++, y += 14)
      svg.append("<rect x=\"").append(LEFT + 8).append("\" y=\"").append(y - 9).append("\" width=\"10\" height=\"10\" fill=\"").append(color(i))
          .append("\"/><text x=\"").append(LEFT + 22).append("\" y=\"").append(y).append("\">").append(escape(series.get(i).name())).append("</text>\n");
  }

  private static String color(int i) {
    return COLORS[i % COLORS.length];
  }

  private static String fmt(double v) {
    return String.format(Locale.ROOT, "%.1f", v);
  }

  /** A tick or tooltip number: short, no exponent for ordinary magnitudes. */
  static String num(double v) {
    if (v == Math.rint(v) && Math.abs(v) < 1e9) return Long.toString((long) v);
    double a = Math.abs(v);
    if (a >= 1e-3 && a < 1e6) {
      String s = String.format(Locale.ROOT, "%.4g", v);
      return s.contains(".") && !s.contains("e") ? s.replaceAll("\\.?0+$", "") : s;
    }
    return String.format(Locale.ROOT, "%.2e", v);
  }
}
