package io.actindex.query.report;

import java.util.List;
import java.util.Locale;

/**
 * Builds the self-contained HTML pages the tool writes: one inline style sheet, inline SVG charts
 * ({@link SvgChart}), no script, and a Content-Security-Policy that forbids every fetch, so a page
 * opens offline and cannot load anything from the network even if a label smuggles a URL in.
 * Sections hold a chart and the table of its numbers; every text goes through {@link #esc}.
 */
public final class HtmlPage {
  private static final String STYLE = """
      body{font-family:sans-serif;max-width:1120px;margin:1.2em auto;padding:0 1em;color:#1d1d1d;line-height:1.4}
      h1{font-size:1.5em;margin-bottom:.2em}h2{font-size:1.2em;border-bottom:2px solid #1b6f8a;padding-bottom:.15em;margin-top:1.6em}
      .lede{color:#444;margin-top:0}.note{color:#555;font-size:.92em}
      .caution{border-left:5px solid #222;padding:.4em .8em;background:#f3f3f3}
      .pair{display:flex;flex-wrap:wrap;gap:1.2em;align-items:flex-start}
      table{border-collapse:collapse;margin:.4em 0;font-size:.9em}
      td,th{border:1px solid #b9b9b9;padding:2px 8px;text-align:right;vertical-align:top}
      th{background:#e8eef1}td.l,th.l{text-align:left}
      .kv td:first-child{text-align:left;font-weight:bold;background:#f6f6f6}
      .scroll{max-height:360px;overflow:auto}
      """;

  private final StringBuilder html = new StringBuilder();

  /** Opens a page with its title and a one-line description under it. */
  public HtmlPage(String title, String lede) {
    html.append("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\n")
        .append("<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; style-src 'unsafe-inline'; img-src data:\">\n")
        .append("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>").append(esc(title))
        .append("</title>\n<style>").append(STYLE).append("</style></head><body>\n<h1>").append(esc(title)).append("</h1>\n");
    if (lede != null && !lede.isEmpty()) html.append("<p class=\"lede\">").append(esc(lede)).append("</p>\n");
  }

  /** A section heading with an id (for links and tests) and an explanatory paragraph. */
  public HtmlPage section(String id, String title, String text) {
    html.append("<h2 id=\"").append(esc(id)).append("\">").append(esc(title)).append("</h2>\n");
    if (text != null && !text.isEmpty()) paragraph(text);
    return this;
  }

  public HtmlPage paragraph(String text) {
    html.append("<p>").append(esc(text)).append("</p>\n");
    return this;
  }

  public HtmlPage note(String text) {
    html.append("<p class=\"note\">").append(esc(text)).append("</p>\n");
    return this;
  }

  /** A boxed caution (e.g. that an out-of-distribution flag is a heuristic, not a guarantee). */
  public HtmlPage caution(String text) {
    html.append("<p class=\"caution\">").append(esc(text)).append("</p>\n");
    return this;
  }

  /** A chart (SVG from {@link SvgChart}) with the table of its numbers beside it. */
  public HtmlPage chartWithTable(String svg, Table table) {
    html.append("<div class=\"pair\"><figure style=\"margin:0\">").append(svg).append("</figure>\n");
    if (table != null) html.append("<div class=\"scroll\">").append(table.html()).append("</div>");
    html.append("</div>\n");
    return this;
  }

  public HtmlPage table(Table table) {
    html.append(table.html());
    return this;
  }

  /** Raw, already-escaped HTML (a chart, or a table made with {@link Table}). */
  public HtmlPage raw(String fragment) {
    html.append(fragment);
    return this;
  }

  public String finish() {
    return html + "<p class=\"note\">Written by actindex. Self-contained: no script, nothing fetched.</p>\n</body></html>\n";
  }

  /** HTML/XML escaping of text and attribute values. */
  public static String esc(String s) {
    return SvgChart.escape(s);
  }

  /** A count with its noun in agreement: {@code count(1, "example")} is "1 example", {@code count(2, "example")} "2 examples". */
  public static String count(long n, String noun) {
    return n + " " + noun + (n == 1 ? "" : "s");
  }

  /** A number for a table cell: integers plain, others with 4 significant digits. */
  public static String num(double v) {
    if (Double.isNaN(v)) return "n/a";
    if (v == Math.rint(v) && Math.abs(v) < 1e15) return Long.toString((long) v);
    return String.format(Locale.ROOT, "%.4g", v);
  }

  /** A table: header cells, then rows; the first {@code textColumns} columns are left-aligned text. */
  public static final class Table {
    private final StringBuilder t = new StringBuilder();
    private final int textColumns;

    public Table(String cssClass, int textColumns, List<String> header) {
      this.textColumns = textColumns;
      t.append("<table").append(cssClass == null ? "" : " class=\"" + esc(cssClass) + "\"").append(">");
      if (header != null && !header.isEmpty()) {
        t.append("<tr>");
        for (int i = 0; i < header.size(); i++)
          t.append(i < textColumns ? "<th class=\"l\">" : "<th>").append(esc(header.get(i))).append("</th>");
        t.append("</tr>\n");
      }
    }

    /** One row; each cell is a String (escaped) or a Number (formatted by {@link #num}). */
    public Table row(Object... cells) {
      t.append("<tr>");
      for (int i = 0; i < cells.length; i++) {
        Object c = cells[i];
        String text = c == null ? "" : c instanceof Number n ? num(n.doubleValue()) : c.toString();
        t.append(i < textColumns ? "<td class=\"l\">" : "<td>").append(esc(text)).append("</td>");
      }
      t.append("</tr>\n");
      return this;
    }

    public String html() {
      return t + "</table>\n";
    }
  }
}
