package io.actindex.query.report;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.ByteArrayInputStream;
import java.nio.charset.StandardCharsets;
import java.util.List;
import javax.xml.parsers.DocumentBuilderFactory;
import org.junit.jupiter.api.Test;
import org.w3c.dom.Document;

/**
 * The chart writer's output is checked with the JDK's XML parser (XML 1.0, W3C 2008) as the
 * outside reference: every chart, degenerate ones included, must be well-formed and keep hostile
 * labels as text.
 */
class SvgChartTest {

  static Document parse(String svg) throws Exception {
    DocumentBuilderFactory f = DocumentBuilderFactory.newInstance();
    f.setFeature("http://apache.org/xml/features/disallow-doctype-decl", true);
    return f.newDocumentBuilder().parse(new ByteArrayInputStream(svg.getBytes(StandardCharsets.UTF_8)));
  }

  @Test
  void labelsAreEscaped() throws Exception {
    String evil = "<script>alert('x')</script> & \"q\"\u0001";
    String svg = SvgChart.lines(evil, evil, evil, List.of(new SvgChart.Series(evil, new double[] {0, 1}, new double[] {0, 1})), false, false);
    Document d = parse(svg);
    assertThat(d.getElementsByTagName("script").getLength()).isZero();
    assertThat(d.getDocumentElement().getTextContent()).contains("<script>alert('x')</script> & \"q\"?");
  }

  @Test
  void emptyDataGivesAFrameSayingSo() throws Exception {
    String lines = SvgChart.lines("t", "x", "y", List.of(), false, false);
    assertThat(parse(lines).getDocumentElement().getTextContent()).contains("no data");
    String bars = SvgChart.bars("t", "x", "y", new double[0], List.of(), false);
    assertThat(parse(bars).getDocumentElement().getTextContent()).contains("no data");
  }

  @Test
  void oneBarAndOnePointAreDrawn() throws Exception {
    Document d = parse(SvgChart.bars("t", "x", "y", new double[] {4.5, 5.5}, List.of(new SvgChart.Series("s", null, new double[] {7})), false));
    assertThat(d.getElementsByTagName("rect").getLength()).isEqualTo(3); // frame, bar, legend swatch
    Document p = parse(SvgChart.lines("t", "x", "y", List.of(new SvgChart.Series("s", new double[] {2}, new double[] {2})), false, false));
    assertThat(p.getElementsByTagName("path").item(0).getAttributes().getNamedItem("d").getNodeValue()).startsWith("M");
  }

  @Test
  void logAxesLeaveOutZerosAndSaySo() throws Exception {
    String svg = SvgChart.lines("t", "x", "y", List.of(new SvgChart.Series("s", new double[] {0, 1, 10, 100}, new double[] {1, 0, 5, 50})), true, true);
    Document d = parse(svg);
    assertThat(d.getDocumentElement().getTextContent()).contains("2 values not shown");
    String path = d.getElementsByTagName("path").item(0).getAttributes().getNamedItem("d").getNodeValue();
    assertThat(path.split("M")).hasSize(2); // one run: the two usable points
    String bars = SvgChart.bars("t", "x", "y", new double[] {0, 1, 2, 3}, List.of(new SvgChart.Series("s", null, new double[] {0, 10, 1000})), true);
    assertThat(parse(bars).getDocumentElement().getTextContent()).contains("1 value not shown");
  }

  /** A bar of the smallest value had no height on a log axis whose base was that value (a report's region of count 1 vanished). */
  @Test
  void everyPositiveBarOnALogAxisHasAHeight() throws Exception {
    double[][] cases = {{1}, {1, 1}, {1, 8, 0, 1}, {10, 100}, {2, 3}, {0.01, 1}};
    for (double[] values : cases) {
      double[] edges = new double[values.length + 1];
      for (int i = 0; i < edges.length; i++) edges[i] = i;
      Document d = parse(SvgChart.bars("t", "x", "y", edges, List.of(new SvgChart.Series("s", null, values)), true));
      org.w3c.dom.NodeList rects = d.getElementsByTagName("rect");
      int bars = 0;
      for (int i = 0; i < rects.getLength(); i++) {
        org.w3c.dom.Element r = (org.w3c.dom.Element) rects.item(i);
        if (r.getElementsByTagName("title").getLength() == 0) continue; // frame and legend swatch
        bars++;
        assertThat(Double.parseDouble(r.getAttribute("height"))).as(java.util.Arrays.toString(values) + " " + r.getTextContent()).isPositive();
      }
      assertThat(bars).as(java.util.Arrays.toString(values)).isEqualTo((int) java.util.Arrays.stream(values).filter(v -> v > 0).count());
    }
  }

  /** A share repeated everywhere (1, or 0) is drawn on an axis within [0, 1], not padded past it; other values as before. */
  @Test
  void aShareAxisStaysWithinZeroAndOne() {
    for (double v : new double[] {0, 0.9, 1}) {
      SvgChart.Axis y = SvgChart.Axis.share();
      y.include(v);
      y.finish();
      assertThat(y.lo).as("share " + v).isBetween(0.0, v);
      assertThat(y.hi).as("share " + v).isBetween(v, 1.0).isGreaterThan(y.lo);
    }
    SvgChart.Axis plain = new SvgChart.Axis(false);
    plain.include(1);
    plain.finish();
    assertThat(plain.hi).isEqualTo(1.5);
    String bars = SvgChart.shareBars("t", "x", "y", new double[] {0, 1, 2}, null, List.of(new SvgChart.Series("s", null, new double[] {0, 0})));
    assertThat(bars).doesNotContain(">-1</text>").contains(">1</text>");
  }

  /** A bar's tooltip names its bin: by the name given, else by its edges. */
  @Test
  void barTooltipsNameTheirBin() throws Exception {
    List<SvgChart.Series> one = List.of(new SvgChart.Series("s", null, new double[] {3, 0.25}));
    String named = SvgChart.bars("t", "x", "y", new double[] {0, 1, 2}, List.of("unit h:0", "unit h:1"), one, false);
    assertThat(named).contains("<title>unit h:0, s: 3</title>").contains("<title>unit h:1, s: 0.25</title>");
    assertThat(SvgChart.bars("t", "x", "y", new double[] {0, 0.5, 1}, one, false)).contains("<title>0 to 0.5, s: 3</title>")
        .contains("<title>0.5 to 1, s: 0.25</title>");
    parse(named);
  }

  @Test
  void tickNumbersAreShort() {
    assertThat(SvgChart.num(1000.25)).isEqualTo("1000");
    assertThat(SvgChart.num(0.25)).isEqualTo("0.25");
    assertThat(SvgChart.num(3)).isEqualTo("3");
    assertThat(SvgChart.num(1.5e-7)).isEqualTo("1.50e-07");
  }
}
