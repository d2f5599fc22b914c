package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.MethodSource;
import picocli.CommandLine;

/** Parsing, help, version and exit codes that need no index. */
class MainTest {
  static final List<String> COMMANDS = List.of("build", "add", "info", "nearest", "region", "census", "compare", "fidelity", "dupes",
      "ood", "export-edge", "report", "delete", "compact", "check", "calibrate-planner");

  @Test
  void everyContractCommandIsRegistered() {
    CommandLine cl = Main.commandLine(new java.io.PrintWriter(java.io.Writer.nullWriter()),
        new java.io.PrintWriter(java.io.Writer.nullWriter()));
    assertThat(cl.getSubcommands().keySet()).containsAll(COMMANDS);
  }

  static List<String> commands() {
    return COMMANDS;
  }

  @ParameterizedTest
  @MethodSource("commands")
  void helpWorksForEveryCommand(String command) {
    Cli.Result r = Cli.run(command, "--help");
    assertThat(r.code()).as(r.describe()).isZero();
    assertThat(r.out()).as(r.describe()).contains("Usage: actindex " + command).contains("--help");
    assertThat(r.err()).as(r.describe()).isEmpty();
    Cli.Result viaHelp = Cli.run("help", command);
    assertThat(viaHelp.code()).as(viaHelp.describe()).isZero();
    assertThat(viaHelp.out()).isEqualTo(r.out());
  }

  /**
   * The command list of {@code actindex --help} shows the first line of each description: it must be
   * a whole sentence (a description cut into lines mid-sentence showed "...merged into as few").
   * Every option says what it does, and one with a default value names it. Every description line
   * is a format string to picocli: a lone {@code %} ("99% of them") printed a warning on stderr
   * (System.err, not the command's) for {@code ood calibrate --help}; picocli warns while it formats
   * a description, so the descriptions are read here with System.err captured.
   */
  @Test
  void everyCommandAndOptionIsDescribed() {
    java.io.PrintStream realErr = System.err;
    java.io.ByteArrayOutputStream warnings = new java.io.ByteArrayOutputStream();
    System.setErr(new java.io.PrintStream(warnings, true, java.nio.charset.StandardCharsets.UTF_8));
    try {
      describedWithoutWarnings();
    } finally {
      System.setErr(realErr);
    }
    assertThat(warnings.toString(java.nio.charset.StandardCharsets.UTF_8)).as("picocli's warnings while formatting the help").isEmpty();
  }

  private void describedWithoutWarnings() {
    CommandLine root = Main.commandLine(new java.io.PrintWriter(java.io.Writer.nullWriter()),
        new java.io.PrintWriter(java.io.Writer.nullWriter()));
    List<CommandLine> todo = new java.util.ArrayList<>(root.getSubcommands().values());
    List<String> problems = new java.util.ArrayList<>();
    int checked = 0;
    while (!todo.isEmpty()) {
      CommandLine c = todo.removeLast();
      todo.addAll(c.getSubcommands().values());
      String name = c.getCommandSpec().qualifiedName();
      if (name.endsWith(" help")) continue; // picocli's own help command
      c.usage(new java.io.PrintStream(java.io.OutputStream.nullOutputStream())); // formats every line as --help does
      String[] description = c.getCommandSpec().usageMessage().description();
      if (description.length == 0 || !description[0].endsWith("."))
        problems.add(name + ": the first description line (its summary in 'actindex --help') is not a whole sentence");
      for (CommandLine.Model.OptionSpec o : c.getCommandSpec().options()) {
        String text = String.join(" ", o.description());
        if (text.isBlank()) problems.add(name + " " + o.longestName() + ": no description");
        boolean flag = o.typeInfo().getType() == boolean.class || o.usageHelp() || o.versionHelp();
        if (o.defaultValue() != null && !flag && !text.toLowerCase(java.util.Locale.ROOT).contains("default"))
          problems.add(name + " " + o.longestName() + ": has the default " + o.defaultValue() + " but its description does not say so");
        checked++;
      }
    }
    assertThat(problems).isEmpty();
    assertThat(checked).as("options checked").isGreaterThan(100);
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
  void aMistypedOptionOrCommandIsAnsweredWithTheNearestNames() {
    Cli.Result r = Cli.run("nearest", "--index", "x", "--activation", "q.npy");
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err()).as(r.describe()).contains("'--activation'").contains("did you mean --activations");
    Cli.Result c = Cli.run("nearst", "--index", "x");
    assertThat(c.code()).as(c.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(c.err()).as(c.describe()).contains("unknown command 'nearst'; did you mean nearest?");
    Cli.Result o = Cli.run("ood", "calibrat", "--index", "x");
    assertThat(o.code()).as(o.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(o.err()).as(o.describe()).contains("actindex ood: unknown command 'calibrat'; did you mean calibrate?");
    Cli.Result far = Cli.run("info", "--index", "x", "--frobnicate");
    assertThat(far.err()).as(far.describe()).doesNotContain("did you mean");
    // the fewest edits wins: picocli's letter-pair ranking answered --index for --input, --header for
    // --held-out-input (no option is near it) and nothing for --bwhere
    String[][] typed = {{"nearest", "--input", "did you mean --inputs?"}, {"compare", "--bwhere", "did you mean --b-where?"},
        {"nearest", "--k", "did you mean -k?"}, {"compare", "--a-wher=x", "did you mean --a-where?"}};
    for (String[] t : typed) {
      Cli.Result m = Cli.run(t[0], "--index", "x", t[1], "v");
      assertThat(m.code()).as(m.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(m.err()).as(m.describe()).contains(t[2]);
    }
    Cli.Result none = Cli.run("ood", "calibrate", "--index", "x", "--held-out-input", "v.npy");
    assertThat(none.err()).as(none.describe()).doesNotContain("did you mean");
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
