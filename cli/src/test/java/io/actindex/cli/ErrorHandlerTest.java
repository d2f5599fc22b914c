package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.BadInputException;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.util.concurrent.Callable;
import java.util.concurrent.CompletionException;
import org.junit.jupiter.api.Test;
import picocli.CommandLine;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;

/** Exit codes and messages for failures inside a command. */
class ErrorHandlerTest {

  @Command(name = "boom")
  static final class Boom implements Callable<Integer> {
    @Mixin Verbose verbose;

    @Option(names = "--kind") String kind;

    @Override
    public Integer call() throws Exception {
      switch (kind) {
        case "bad" -> throw new BadInputException("q.npy: row 3, column 7: NaN");
        case "wrapped" -> throw new CompletionException(new BadInputException("meta.csv: row 2: duplicate key 'a'"));
        case "missing" -> throw new java.nio.file.NoSuchFileException("nothere.npy");
        default -> throw new IllegalStateException("kaputt");
      }
    }
  }

  private static String[] run(String... args) {
    StringWriter out = new StringWriter(), err = new StringWriter();
    CommandLine cl = new CommandLine(new Boom());
    cl.setOut(new PrintWriter(out));
    cl.setErr(new PrintWriter(err));
    cl.setExecutionExceptionHandler(new ErrorHandler());
    cl.setParameterExceptionHandler(new ErrorHandler());
    int code = cl.execute(args);
    return new String[] {Integer.toString(code), out.toString(), err.toString()};
  }

  @Test
  void badInputExitsTwoWithOneLine() {
    String[] r = run("--kind", "bad");
    assertThat(r[0]).isEqualTo("2");
    assertThat(r[2]).isEqualTo("boom: q.npy: row 3, column 7: NaN" + System.lineSeparator());
  }

  @Test
  void badInputIsFoundInsideWrappers() {
    String[] r = run("--kind", "wrapped");
    assertThat(r[0]).isEqualTo("2");
    assertThat(r[2]).contains("meta.csv: row 2: duplicate key 'a'").doesNotContain("\tat ");
  }

  @Test
  void missingFileExitsTwo() {
    String[] r = run("--kind", "missing");
    assertThat(r[0]).isEqualTo("2");
    assertThat(r[2]).contains("nothere.npy: no such file");
  }

  @Test
  void internalErrorExitsOneWithHint() {
    String[] r = run("--kind", "other");
    assertThat(r[0]).isEqualTo("1");
    assertThat(r[2]).contains("internal error").contains("kaputt").contains("--verbose").doesNotContain("\tat ");
  }

  @Test
  void verbosePrintsTheStackTrace() {
    String[] r = run("--kind", "other", "--verbose");
    assertThat(r[0]).isEqualTo("1");
    assertThat(r[2]).contains("kaputt").contains("\tat ");
  }
}
