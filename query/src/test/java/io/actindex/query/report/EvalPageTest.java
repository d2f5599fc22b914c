package io.actindex.query.report;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.query.OodEval;
import io.actindex.query.RocMetrics;
import org.junit.jupiter.api.Test;
import org.w3c.dom.NodeList;

/** {@link EvalPage#histogram} with infinite scores (query rows past float32): no NaN or Infinity in the SVG, the axis counts them. */
class EvalPageTest {
  @Test
  void infiniteScoresAreCountedNotDrawn() throws Exception {
    double[] in = {0.5, 1.0, 1.5, 2.0}, out = {1.75, 3.0, Double.POSITIVE_INFINITY};
    String svg = EvalPage.histogram(new OodEval.Scored("euclidean", "test", in, out, RocMetrics.of(in, out)));
    assertThat(svg).doesNotContain("NaN").doesNotContain("Infinity").contains("euclidean score (1 infinite, past float32, not shown)");
    NodeList rects = SvgChartTest.parse(svg).getElementsByTagName("rect");
    double outShare = 0;
    for (int i = 0; i < rects.getLength(); i++) {
      var title = rects.item(i).getTextContent();
      if (title.contains(", out: ")) outShare += Double.parseDouble(title.substring(title.indexOf(", out: ") + 7));
    }
    assertThat(outShare).as("the finite out scores' share of all out inputs").isCloseTo(2.0 / 3, org.assertj.core.data.Offset.offset(1e-3));
    String none = EvalPage.histogram(new OodEval.Scored("euclidean", "test", in, new double[] {Double.POSITIVE_INFINITY},
        RocMetrics.of(in, new double[] {Double.POSITIVE_INFINITY})));
    assertThat(none).doesNotContain("NaN").doesNotContain("Infinity");
    SvgChartTest.parse(none);
  }
}
