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

    @Option(names = "--matrix-rows") Integer matrixRows;

    @Option(names = "-k") Integer k;

    @Override
    public Integer call() throws Exception {
      return switch (kind) {
        case "bad" -> throw new BadInputException("q.npy: row 3, column 7: NaN");
        case "param" -> throw new CompletionException(new io.actindex.core.BadParameterException("matrixRows", " must be from 2 to 9, got 1"));
        case "param-k" -> throw new io.actindex.core.BadParameterException("k", " 7 is larger than the 5 rows");
        case "param-elsewhere" -> throw new io.actindex.core.BadParameterException("dupesRadius", " must be 0 to 64; got 65");
        case "hint" -> throw new BadInputException("q.csv: its header names the model inputs; pass it with `Source.inputs`");
        case "param-hint" -> throw new io.actindex.core.BadParameterException("k", " 7 is larger than the 5 rows; lower `k` or give `matrixRows`");
        case "wrapped" -> throw new CompletionException(new BadInputException("meta.csv: row 2: duplicate key 'a'"));
        case "missing" -> throw new java.nio.file.NoSuchFileException("nothere.npy");
        case "notdir" -> throw new java.nio.file.NotDirectoryException("plain.txt");
        case "multiline" -> throw new BadInputException("meta.csv: line 2: key 'a\nb\u0000c' already used" + "x".repeat(5000));
        case "full" -> throw new java.io.UncheckedIOException("writing", io.actindex.core.NoSpace.exception());
        case "full-file" -> throw new java.nio.file.FileSystemException("out/p.csv", null, "No space left on device");
        case "oom" -> throw new OutOfMemoryError("Java heap space");
        case "oom-in-pool" -> throw new IllegalStateException(new java.util.concurrent.ExecutionException(new OutOfMemoryError("Java heap space")));
        case "soe" -> {
          recurse(0);
          yield 0;
        }
        default -> throw new IllegalStateException("kaputt");
      };
    }
  }

  static int recurse(int depth) {
    return recurse(depth + 1) + 1; // a real StackOverflowError
  }

  /** Runs Boom the way {@link Main#run} runs a command: through {@link ErrorHandler#execute}. */
  private static String[] run(String... args) {
    StringWriter out = new StringWriter(), err = new StringWriter();
    CommandLine cl = new CommandLine(new Boom());
    cl.setOut(new PrintWriter(out));
    cl.setErr(new PrintWriter(err));
    cl.setExecutionExceptionHandler(new ErrorHandler());
    cl.setParameterExceptionHandler(new ErrorHandler());
    int code = ErrorHandler.execute(cl, args);
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
  void aRefusedApiParameterIsNamedByTheCommandsOptionForIt() {
    // the API's message names the parameter as Java code does; the command line names its option
    assertThat(new io.actindex.core.BadParameterException("matrixRows", " must be from 2 to 9, got 1")).hasMessage("matrixRows must be from 2 to 9, got 1");
    assertThat(run("--kind", "param")[2]).isEqualTo("boom: --matrix-rows must be from 2 to 9, got 1" + System.lineSeparator());
    assertThat(run("--kind", "param-k")[2]).isEqualTo("boom: -k 7 is larger than the 5 rows" + System.lineSeparator());
    // a command without such an option did not take the value from the user: the API's words stay
    String[] r = run("--kind", "param-elsewhere");
    assertThat(r[0]).isEqualTo("2");
    assertThat(r[2]).isEqualTo("boom: dupesRadius must be 0 to 64; got 65" + System.lineSeparator());
  }

  @Test
  void javaNamesInsideAMessageArePrintedAsOptions() {
    // the library names what the caller passed in Java terms; the command line prints its options
    assertThat(new BadInputException("q.csv: pass it with `Source.inputs`")).hasMessage("q.csv: pass it with `Source.inputs`");
    // Boom takes --kind and no --inputs, as compare does: the kind is named as its value
    assertThat(run("--kind", "hint")[2]).isEqualTo("boom: q.csv: its header names the model inputs; pass it with --kind inputs" + System.lineSeparator());
    assertThat(run("--kind", "param-hint")[2]).isEqualTo("boom: -k 7 is larger than the 5 rows; lower -k or give --matrix-rows" + System.lineSeparator());
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

  /** A full disk no writer named (the JDK's own ENOSPC text): exit 2, one line, the file when the JDK names it. */
  @Test
  void diskFullExitsTwoWithOneLine() {
    String[] r = run("--kind", "full");
    assertThat(r[0]).isEqualTo("2");
    assertThat(r[2]).startsWith("boom: writing an output: no space left on device (").hasLineCount(1);
    String[] f = run("--kind", "full-file");
    assertThat(f[0]).isEqualTo("2");
    assertThat(f[2]).startsWith("boom: out/p.csv: no space left on device (No space left on device); not written").hasLineCount(1);
  }

  @Test
  void notAFolderExitsTwo() {
    String[] r = run("--kind", "notdir");
    assertThat(r[0]).isEqualTo("2");
    assertThat(r[2]).isEqualTo("boom: plain.txt: not a folder (a part of this path is a file)" + System.lineSeparator());
  }

  @Test
  void messagesStayOnOneShortLine() {
    String[] r = run("--kind", "multiline");
    assertThat(r[0]).isEqualTo("2");
    assertThat(r[2].strip()).doesNotContain("\n").doesNotContain("\u0000").contains("key 'a\\nb\\u0000c'")
        .contains("characters)").hasSizeLessThan(ErrorHandler.MAX_MESSAGE + 100);
  }

  /** JVM errors never reach the user as a stack trace: one line, exit 1. */
  @Test
  void outOfMemoryIsOneLineWithTheMemoryHint() {
    for (String kind : new String[] {"oom", "oom-in-pool"}) {
      String[] r = run("--kind", kind);
      assertThat(r[0]).isEqualTo("1");
      assertThat(r[2]).isEqualTo("boom: out of memory (Java heap space); give Java more, e.g. ACTINDEX_JAVA_OPTS=-Xmx8g bin/actindex ..., "
          + "or use smaller inputs" + System.lineSeparator());
    }
  }

  @Test
  void stackOverflowIsOneLine() {
    String[] r = run("--kind", "soe");
    assertThat(r[0]).isEqualTo("1");
    assertThat(r[2]).startsWith("boom: internal error: stack overflow").contains("--verbose").doesNotContain("\tat ");
    assertThat(r[2].strip()).doesNotContain("\n");
  }
}
