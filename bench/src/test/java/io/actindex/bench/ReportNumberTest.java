package io.actindex.bench;

import static org.assertj.core.api.Assertions.assertThat;

import org.junit.jupiter.api.Test;

class ReportNumberTest {
  @Test
  void jmhFiguresAsNumbersOrStrings() {
    assertThat(Report.number("NaN")).isNaN();
    assertThat(Report.number(2.0)).isEqualTo(2.0);
    assertThat(Report.number(3L)).isEqualTo(3.0);
    assertThat(Report.number(null)).isNaN();
  }
}
