package io.actindex.demo;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.cli.Main;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class DemoCommandTest {
  @TempDir Path tmp;

  private static String[] run(String... args) {
    StringWriter out = new StringWriter(), err = new StringWriter();
    int code = Main.run(new PrintWriter(out), new PrintWriter(err), args);
    return new String[] {Integer.toString(code), out.toString(), err.toString()};
  }

  @Test
  void demoRunsTheMainJobAndShowsItsCommands() throws Exception {
    Path dir = tmp.resolve("demo");
    String[] r = run("demo", "--out", dir.toString(), "--size", "small");
    assertThat(r[0]).as(r[1] + r[2]).isEqualTo("0");
    assertThat(r[1]).contains("$ actindex build --out " + dir.resolve("index"))
        .contains("$ actindex nearest --index").contains("$ actindex census --index").contains("$ actindex report --index")
        .contains("vote: ").contains("regions by layer prefix").contains("accuracy on the test split");
    assertThat(Files.isDirectory(dir.resolve("index"))).isTrue();
    assertThat(Files.size(dir.resolve("report.html"))).isPositive();
    // a second run into the same folder replaces the demo's own files and says the same (timings aside)
    String[] again = run("demo", "--out", dir.toString(), "--size", "small");
    assertThat(again[0]).as(again[1] + again[2]).isEqualTo("0");
    assertThat(withoutTimes(again[1])).isEqualTo(withoutTimes(r[1]));
  }

  private static String withoutTimes(String s) {
    return s.replaceAll("[0-9.]+ s\\b", "T s");
  }

  @Test
  void demoIsListedAndRefusesAForeignFolder() throws Exception {
    String[] help = run("--help");
    assertThat(help[1]).contains("demo");
    String[] demoHelp = run("demo", "--help");
    assertThat(demoHelp[0]).isEqualTo("0");
    assertThat(demoHelp[1]).contains("Usage: actindex demo").contains("--out");
    Path foreign = Files.createDirectories(tmp.resolve("mine"));
    Files.writeString(foreign.resolve("notes.txt"), "keep me");
    String[] r = run("demo", "--out", foreign.toString());
    assertThat(r[0]).isEqualTo("2");
    assertThat(r[2]).contains("not made by the demo");
    assertThat(Files.readString(foreign.resolve("notes.txt"))).isEqualTo("keep me");
  }
}
