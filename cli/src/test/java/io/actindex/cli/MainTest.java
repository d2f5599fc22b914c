package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;
import picocli.CommandLine;

/** Parsing, help, version and exit codes that need no index. */
class MainTest {
  static final List<String> COMMANDS = List.of("build", "add", "info", "nearest", "region", "census", "compare", "fidelity", "dupes",
      "ood", "export-edge", "report", "delete", "compact", "check");

  @Test
  void everyContractCommandIsRegistered() {
    CommandLine cl = Main.commandLine(new java.io.PrintWriter(java.io.Writer.nullWriter()),
        new java.io.PrintWriter(java.io.Writer.nullWriter()));
    assertThat(cl.getSubcommands().keySet()).containsAll(COMMANDS);
  }

  @ParameterizedTest
  @ValueSource(strings = {"build", "add", "info", "nearest", "region", "census", "compare", "ood", "export-edge"})
  void helpWorksForEveryCommand(String command) {
    Cli.Result r = Cli.run(command, "--help");
    assertThat(r.code()).as(r.describe()).isZero();
    assertThat(r.out()).as(r.describe()).contains("Usage: actindex " + command).contains("--help");
    assertThat(r.err()).as(r.describe()).isEmpty();
    Cli.Result viaHelp = Cli.run("help", command);
    assertThat(viaHelp.code()).as(viaHelp.describe()).isZero();
    assertThat(viaHelp.out()).isEqualTo(r.out());
  }

  @Test
  void topLevelHelpListsCommandsAndExitCodes() {
    Cli.Result r = Cli.run("--help");
    assertThat(r.code()).as(r.describe()).isZero();
    for (String c : COMMANDS) assertThat(r.out()).as(r.describe()).contains("  " + c);
    assertThat(r.out()).contains("Exit codes: 0 ok, 2 bad usage or bad input, 1 internal error.");
  }

  @Test
  void versionNamesTheProject() {
    Cli.Result r = Cli.run("--version");
    assertThat(r.code()).as(r.describe()).isZero();
    assertThat(r.out()).as(r.describe()).startsWith("actindex ").doesNotContain("${");
  }

  @Test
  void noCommandIsBadUsage() {
    Cli.Result r = Cli.run();
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err()).contains("Usage: actindex");
  }

  @Test
  void unknownOptionIsBadUsageWithOneMessageAndAHint() {
    Cli.Result r = Cli.run("info", "--index", "x", "--frobnicate");
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err()).as(r.describe()).contains("--frobnicate").contains("actindex info --help").doesNotContain("\tat ");
    assertThat(r.out()).isEmpty();
  }

  @Test
  void missingRequiredOptionIsBadUsage() {
    Cli.Result r = Cli.run("nearest", "--activations", "q.npy");
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err()).as(r.describe()).contains("--index");
  }

  @Test
  void badFormatValueIsBadUsage() {
    Cli.Result r = Cli.run("census", "--index", "x", "--format", "xml");
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err()).as(r.describe()).contains("xml");
  }

  @Test
  void twoSourcesAreBadUsage() {
    Cli.Result r = Cli.run("build", "--out", "x", "--activations", "a.npy", "--codes", "c.npy");
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err()).as(r.describe()).contains("exactly one source");
  }

  @Test
  void negativeThreadsAreBadUsage() {
    Cli.Result r = Cli.run("nearest", "--index", "x", "--activations", "q.npy", "--threads", "-2");
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err()).as(r.describe()).contains("--threads");
  }
}
