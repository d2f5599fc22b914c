package io.actindex.demo;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.cli.Main;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The demo's report in a real browser (Debian's headless chromium, which {@code bin/test} installs
 * when it is missing): the page renders every chart and table, fetches nothing but itself, logs no
 * error, and stays under 2 MB. A screenshot lands in {@code target/report-screenshot.png}.
 */
@Tag("slow")
class ReportInBrowserTest {
  @TempDir Path tmp;

  /** Sections every report has, each with a chart and a table of its numbers. */
  static final List<String> SECTIONS = List.of("overview", "regions", "neurons", "nearest-other", "purity", "ood", "dupes", "compare");

  @Test
  void reportRendersOfflineWithEveryChartAndTable() throws Exception {
    Path chromium = HeadlessChromium.find().orElseThrow(() -> new AssertionError(
        "no chromium found: install Debian's 'chromium' package (bin/test and .ci/run do this when they can)"));
    Path dir = tmp.resolve("demo");
    StringWriter out = new StringWriter(), err = new StringWriter();
    int code = Main.run(new PrintWriter(out), new PrintWriter(err), "demo", "--out", dir.toString(), "--size", "small");
    assertThat(code).as(out + "\n" + err).isZero();
    Path page = dir.resolve("report.html");
    assertThat(Files.size(page)).as("page size").isLessThan(2L << 20);

    try (HeadlessChromium browser = new HeadlessChromium(chromium, 1200, 900)) {
      String url = page.toUri().toString();
      HeadlessChromium.Load load = browser.load(url);
      assertThat(load.requests()).as("requests made by the page").containsOnly(url);
      assertThat(load.errors()).as("console errors").isEmpty();
      @SuppressWarnings("unchecked")
      Map<String, Object> dom = (Map<String, Object>) browser.evaluate("""
          (() => {
            const out = {};
            for (const h of document.querySelectorAll('h2[id]')) {
              let svgs = 0, tables = 0, rows = 0, marks = 0;
              for (let e = h.nextElementSibling; e && e.tagName !== 'H2'; e = e.nextElementSibling) {
                svgs += e.matches('svg') ? 1 : e.querySelectorAll('svg').length;
                tables += e.matches('table') ? 1 : e.querySelectorAll('table').length;
                rows += e.querySelectorAll('tr').length;
                marks += e.querySelectorAll('svg rect, svg path').length;
              }
              const box = h.getBoundingClientRect();
              out[h.id] = {svgs, tables, rows, marks, visible: box.width > 0 && box.height > 0};
            }
            return out;
          })()""");
      for (String s : SECTIONS) {
        assertThat(dom).as("sections rendered").containsKey(s);
        @SuppressWarnings("unchecked")
        Map<String, Object> sec = (Map<String, Object>) dom.get(s);
        assertThat(sec.get("visible")).as(s + " visible").isEqualTo(true);
        assertThat(((Number) sec.get("tables")).intValue()).as(s + " tables").isPositive();
        assertThat(((Number) sec.get("rows")).intValue()).as(s + " table rows").isGreaterThan(1);
        if (!s.equals("overview")) {
          assertThat(((Number) sec.get("svgs")).intValue()).as(s + " charts").isPositive();
          assertThat(((Number) sec.get("marks")).intValue()).as(s + " chart marks").isGreaterThan(1);
        }
      }
      browser.screenshot(Path.of("target", "report-screenshot.png"));
    }
  }
}
