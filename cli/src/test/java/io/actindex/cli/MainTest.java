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
      "ood", "export-edge", "export-codes", "report", "delete", "compact", "check", "calibrate-planner");

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
   * Every option says what it does, and one with a default value names it.
   */
  @Test
  void everyCommandAndOptionIsDescribed() {
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
  void everyHelpPageRendersWithoutPicocliWarnings() {
    // picocli passes each description line through String.format when it renders help; a lone '%' makes it
    // print a warning on stderr (and the raw line) instead. Write a percent sign as %% in descriptions.
    CommandLine root = Main.commandLine(new java.io.PrintWriter(java.io.Writer.nullWriter()),
        new java.io.PrintWriter(java.io.Writer.nullWriter()));
    List<CommandLine> todo = new java.util.ArrayList<>(List.of(root));
    java.io.ByteArrayOutputStream err = new java.io.ByteArrayOutputStream();
    java.io.PrintStream saved = System.err;
    int pages = 0;
    System.setErr(new java.io.PrintStream(err, true, java.nio.charset.StandardCharsets.UTF_8));
    try {
      while (!todo.isEmpty()) {
        CommandLine c = todo.removeLast();
        todo.addAll(c.getSubcommands().values());
        assertThat(c.getUsageMessage(CommandLine.Help.Ansi.OFF)).isNotBlank();
        pages++;
      }
    } finally {
      System.setErr(saved);
    }
    assertThat(err.toString(java.nio.charset.StandardCharsets.UTF_8)).as("picocli's warnings while rendering help").isEmpty();
    assertThat(pages).as("help pages rendered").isGreaterThan(15);
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

  /**
   * A build option typed on add (as a user repeats the build line: add --model M --inputs X) says
   * that add encodes its rows as the index was built; an option neither command has gets no such
   * line; add without a source names the sources add takes (there is no --model there).
   */
  @Test
  void aBuildOptionOnAddSaysThatAddEncodesAsTheIndexWasBuilt() {
    for (String[] typed : new String[][] {{"--model", "m.safetensors"}, {"--threshold=0.5"}, {"--layers", "fc1"}, {"--no-output-layer"}}) {
      java.util.List<String> args = new java.util.ArrayList<>(java.util.List.of("add", "--index", "x", "--inputs", "x.npy"));
      args.addAll(java.util.List.of(typed));
      Cli.Result r = Cli.run(args.toArray(String[]::new));
      assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
      String option = typed[0].contains("=") ? typed[0].substring(0, typed[0].indexOf('=')) : typed[0];
      assertThat(r.err()).as(r.describe()).contains("; " + option + " is a build option: add encodes its rows the way the index was built");
    }
    Cli.Result other = Cli.run("add", "--index", "x", "--inputs", "x.npy", "--frobnicate");
    assertThat(other.err()).as(other.describe()).doesNotContain("build option");
    Cli.Result onBuild = Cli.run("build", "--out", "x", "--inputs", "x.npy", "--frobnicate");
    assertThat(onBuild.err()).as(onBuild.describe()).doesNotContain("build option");
    Cli.Result none = Cli.run("add", "--index", "x");
    assertThat(none.err()).as(none.describe())
        .contains("give exactly one source: --activations FILE, --codes FILE, or --inputs FILE (run through the model stored in the index)");
    assertThat(Cli.run("build", "--out", "x").err()).contains("or --model FILE --inputs FILE");
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
