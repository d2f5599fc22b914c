package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.PrintWriter;
import java.io.StringWriter;
import org.junit.jupiter.api.Test;

class ProgressTest {
  @Test
  void disabledBarWritesNothing() {
    StringWriter sw = new StringWriter();
    try (Progress p = new Progress(new PrintWriter(sw), "rows", false)) {
      p.update(50, 100);
      p.update(100, 100);
    }
    assertThat(sw.toString()).isEmpty();
  }

  @Test
  void enabledBarRedrawsInPlaceAndEndsTheLine() {
    StringWriter sw = new StringWriter();
    try (Progress p = new Progress(new PrintWriter(sw), "rows", true)) {
      p.update(50, 200);
      p.update(200, 200);
    }
    String s = sw.toString();
    assertThat(s).startsWith("\rrows [").endsWith("\n").contains("100% 200/200");
    assertThat(s.chars().filter(c -> c == '\n').count()).isEqualTo(1);
  }

  @Test
  void unknownTotalShowsACount() {
    StringWriter sw = new StringWriter();
    try (Progress p = new Progress(new PrintWriter(sw), "queries", true)) {
      p.update(1234, -1);
    }
    assertThat(sw.toString()).contains("queries 1,234");
  }

  @Test
  void nothingDrawnMeansNothingToClose() {
    StringWriter sw = new StringWriter();
    new Progress(new PrintWriter(sw), "rows", true).close();
    assertThat(sw.toString()).isEmpty();
  }

  /** The terminal decision from its inputs (not from how this test happens to be run). */
  @Test
  void terminalDecision() {
    java.util.function.BooleanSupplier never = () -> {
      throw new AssertionError("console consulted although an earlier input decides");
    };
    assertThat(Progress.isTerminal("true", "pipe:[1]", never)).isTrue(); // the launcher's word wins
    assertThat(Progress.isTerminal("false", "/dev/pts/0", never)).isFalse();
    assertThat(Progress.isTerminal(null, "/dev/pts/3", never)).isTrue();
    assertThat(Progress.isTerminal(null, "/dev/tty1", never)).isTrue();
    assertThat(Progress.isTerminal(null, "pipe:[4242]", never)).isFalse();
    assertThat(Progress.isTerminal(null, "/tmp/log.txt", never)).isFalse();
    assertThat(Progress.isTerminal(null, null, () -> true)).isTrue();
    assertThat(Progress.isTerminal(null, null, () -> false)).isFalse();
  }
}
