package io.actindex.demo;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatIllegalArgumentException;
import static org.assertj.core.api.Assertions.assertThatIllegalStateException;

import io.actindex.cli.Main;
import java.io.IOException;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import java.util.stream.Stream;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Every command line of the documentation that runs on the demo's files still runs as written.
 *
 * <p>Collects, from the fenced code blocks of README.md and docs/**.md, each line that starts with
 * {@code bin/actindex } and names a file under {@code actindex-demo/} (continuation lines ending in
 * {@code \} joined), and each {@code printf 'TEXT' > actindex-demo/FILE} line, which writes a small
 * input file (a keys file) the way the shell would. The demo runs once into a temporary folder; each page then gets a fresh copy of
 * it and runs its examples in the order written (an example may use what an earlier one on the page
 * wrote, e.g. a calibration), in-process through {@link Main#run}. {@code actindex-demo} becomes the
 * copy, the value of an output option ({@link #OUTPUTS}) a file in a scratch folder of the page.
 * Expected: exit 0, or the code a trailing comment states ({@code # refused: exit 2}).
 *
 * <p>A quoted output: a line {@code <!-- output of: COMMAND -->} outside the fenced blocks, right
 * before one, says that the block quotes what COMMAND prints (a demo example as above, or {@code
 * bin/actindex demo} itself). COMMAND runs at that place of the page like an example, and the block
 * must be found in its stdout and stderr, the copy's path written {@code actindex-demo} and the
 * scratch folder's left out, as {@link QuotedOutput} compares them (whitespace free, {@code ...}
 * for what is left out, numbers rounded). So leave timings, sizes on disk and paths outside the
 * demo folder out of a checked quote.
 */
class DocExamplesTest {
  @TempDir Path tmp;

  /** Options whose value is a file or folder the command writes. */
  static final Set<String> OUTPUTS = Set.of("--out", "--pairs", "--html", "--roc", "--c-source");

  /** export-codes' other outputs; these names are no file elsewhere (build's {@code --magnitudes} takes a bit count). */
  static final Set<String> EXPORT_CODES_OUTPUTS = Set.of("--ids", "--magnitudes");

  /**
   * Examples that need files the demo does not write, with the reason (command line as the doc
   * writes it, continuation lines joined by one space). Each must still be found in the docs.
   */
  static final Map<String, String> NOT_RUNNABLE = Map.of(
      "bin/actindex ood score --index actindex-demo/index --inputs inputs.csv --format csv > score.csv",
      "a by-hand comparison with the edge jar: reads inputs.csv, written by the Python line before it, and redirects"
          + " its output for paste and awk (the same agreement is tested by EdgeRowsAgreementTest and EdgeCodesAgreementTest)");

  private static final Pattern EXIT = Pattern.compile("\\bexit (\\d+)\\b");

  /** A line saying that the next fenced block quotes what a command prints. */
  private static final Pattern QUOTES = Pattern.compile("<!-- output of: (.+) -->");

  static final String DEMO = "bin/actindex demo";

  /** One command line of a page; {@code quoted} the block that quotes its output, or null. */
  record Example(String file, int line, String command, int expectedExit, String quoted) {
    Example(String file, int line, String command, int expectedExit) {
      this(file, line, command, expectedExit, null);
    }

    String where() {
      return file + ":" + line;
    }
  }

  @Test
  @Tag("slow")
  void everyDemoExampleOfTheDocsRuns() throws IOException {
    Path root = repositoryRoot();
    List<Example> examples = new ArrayList<>();
    for (Path doc : docs(root)) examples.addAll(examples(root.relativize(doc).toString(), Files.readAllLines(doc)));
    assertThat(examples).as("examples found in the docs").isNotEmpty();
    Set<String> found = new HashSet<>();
    examples.forEach(e -> found.add(e.command()));
    assertThat(found).as("every NOT_RUNNABLE entry is still in the docs").containsAll(NOT_RUNNABLE.keySet());

    Path demo = tmp.resolve("demo");
    String[] made = run("demo", "--out", demo.toString());
    assertThat(made[0]).as("the demo: " + made[1] + made[2]).isEqualTo("0");
    String demoPrinted = made[1].replace(demo.toString(), "actindex-demo");

    Map<String, List<Example>> byFile = new LinkedHashMap<>();
    for (Example e : examples) byFile.computeIfAbsent(e.file(), f -> new ArrayList<>()).add(e);
    List<String> failures = new ArrayList<>();
    int ran = 0, page = 0, quotes = 0;
    for (List<Example> onPage : byFile.values()) {
      Path folder = tmp.resolve("page" + page++);
      Path copy = copyTree(demo, folder.resolve("actindex-demo"));
      Path scratch = Files.createDirectories(folder.resolve("out"));
      for (Example e : onPage) {
        if (NOT_RUNNABLE.containsKey(e.command())) continue;
        if (e.quoted() != null) quotes++;
        if (e.command().equals(DEMO)) {
          String differs = QuotedOutput.mismatch(e.quoted(), demoPrinted);
          if (differs != null) failures.add(e.where() + ": the quoted output differs from the demo's:\n  " + differs);
          continue;
        }
        ran++;
        String[] args;
        try {
          if (e.command().startsWith("printf ")) {
            Written w = printf(e.command(), copy);
            Files.writeString(w.file(), w.text(), StandardCharsets.UTF_8);
            continue;
          }
          args = arguments(e.command(), copy, scratch);
        } catch (IllegalArgumentException cannot) {
          failures.add(e.where() + ": cannot run as written (" + cannot.getMessage() + "): " + e.command());
          continue;
        }
        String[] r = run(args);
        if (!r[0].equals(Integer.toString(e.expectedExit()))) {
          failures.add(e.where() + ": exit " + r[0] + ", expected " + e.expectedExit() + ": " + e.command()
              + "\n  stderr: " + r[2].strip().replace("\n", "\n          "));
        } else if (e.quoted() != null) {
          String printed = (r[1] + "\n" + r[2]).replace(scratch + "/", "").replace(copy.toString(), "actindex-demo");
          String differs = QuotedOutput.mismatch(e.quoted(), printed);
          if (differs != null) failures.add(e.where() + ": the quoted output differs from what " + e.command() + " prints:\n  " + differs);
        }
      }
    }
    System.out.printf("doc examples: %d found, %d run, %d listed as not runnable; %d quoted outputs compared%n",
        examples.size(), ran, NOT_RUNNABLE.size(), quotes);
    assertThat(quotes).as("quoted outputs found in the docs").isPositive();
    assertThat(failures).as("doc examples that no longer run as written").isEmpty();
  }

  @Test
  void collectsDemoLinesOfFencedBlocksOnly() {
    List<String> page = List.of(
        "bin/actindex nearest --index actindex-demo/index       (outside a block: prose)",
        "```",
        "# a comment line naming actindex-demo/index",
        "bin/actindex demo        # writes actindex-demo/windows.npy",
        "bin/actindex-cluster dupes --codes actindex-demo/codes.parquet",
        "bin/actindex compare --index actindex-demo/index \\",
        "    --a-where \"split = train\" --b-where 'line = L1' --top 5   # no difference expected",
        "bin/actindex dupes --index actindex-demo/index --radius -1   # refused: exit 2",
        "bin/actindex build --out my-index --activations train_acts.npy",
        "printf 'k1\\nk2\\n' > actindex-demo/keys.txt   # two keys",
        "printf 'k1\\n' > keys.txt",
        "```");
    assertThat(examples("p.md", page)).containsExactly(
        new Example("p.md", 6, "bin/actindex compare --index actindex-demo/index --a-where \"split = train\" --b-where 'line = L1' --top 5", 0),
        new Example("p.md", 8, "bin/actindex dupes --index actindex-demo/index --radius -1", 2),
        new Example("p.md", 10, "printf 'k1\\nk2\\n' > actindex-demo/keys.txt", 0));
  }

  @Test
  void anOutputQuoteTakesTheBlockAfterIt() {
    List<String> page = List.of(
        "<!-- output of: bin/actindex check --index actindex-demo/index -->",
        "",
        "```",
        "index actindex-demo/index ...",
        "  seg-0.codes ... ok",
        "```",
        "<!-- output of: bin/actindex demo -->",
        "```",
        "```");
    assertThat(examples("p.md", page)).containsExactly(
        new Example("p.md", 1, "bin/actindex check --index actindex-demo/index", 0,
            "index actindex-demo/index ...\n  seg-0.codes ... ok"),
        new Example("p.md", 7, "bin/actindex demo", 0, ""));
    assertThatIllegalStateException().isThrownBy(() -> examples("p.md", List.of("<!-- output of: bin/actindex info --index my-index -->", "```", "```")))
        .withMessageContaining("p.md:1");
    assertThatIllegalStateException().isThrownBy(() -> examples("p.md", List.of("<!-- output of: bin/actindex demo -->", "text", "```", "```")))
        .withMessageContaining("not followed by a fenced block");
  }

  @Test
  void printfLinesWriteTheirTextIntoTheDemoFolder() {
    Path demo = Path.of("/d/actindex-demo");
    assertThat(printf("printf 'w-1\\n w-2\\tx\\\\\\n' > actindex-demo/gone.txt", demo))
        .isEqualTo(new Written(Path.of("/d/actindex-demo/gone.txt"), "w-1\n w-2\tx\\\n"));
    assertThat(printf("printf '' > actindex-demo/empty.txt", demo)).isEqualTo(new Written(Path.of("/d/actindex-demo/empty.txt"), ""));
    for (String shell : List.of("printf 'a\\n' >> actindex-demo/k.txt", "printf \"a\\n\" > actindex-demo/k.txt",
        "printf '%s\\n' a > actindex-demo/k.txt", "printf 'a\\r\\n' > actindex-demo/k.txt", "printf 'a\\n' > k.txt",
        "printf 'a\\n' > actindex-demo/../k.txt", "printf 'a\\n' > actindex-demo/k.txt; rm x"))
      assertThatIllegalArgumentException().as(shell).isThrownBy(() -> printf(shell, demo));
  }

  @Test
  void rewritesTheDemoFolderAndOutputsAndRefusesShellSyntax() {
    Path demo = Path.of("/d/actindex-demo"), scratch = Path.of("/s");
    assertThat(arguments("bin/actindex ood eval --index actindex-demo/index --in actindex-demo/a.npy --out actindex-demo/b.npy "
        + "--html ood.html --where \"split = test\"", demo, scratch)).containsExactly(
        "ood", "eval", "--index", "/d/actindex-demo/index", "--in", "/d/actindex-demo/a.npy", "--out", "/d/actindex-demo/b.npy",
        "--html", "/s/ood.html", "--where", "split = test");
    assertThat(arguments("bin/actindex export-codes --index actindex-demo/index --out c.npy --ids i.csv --magnitudes m.npy", demo, scratch))
        .containsExactly("export-codes", "--index", "/d/actindex-demo/index", "--out", "/s/c.npy", "--ids", "/s/i.csv", "--magnitudes", "/s/m.npy");
    assertThat(arguments("bin/actindex build --out i --codes actindex-demo/c.npy --magnitudes 8", demo, scratch))
        .containsExactly("build", "--out", "/s/i", "--codes", "/d/actindex-demo/c.npy", "--magnitudes", "8");
    for (String shell : List.of("bin/actindex x --inputs actindex-demo/a.npy < in.csv", "bin/actindex x --index $IDX",
        "bin/actindex x --where 'split = test"))
      assertThatIllegalArgumentException().as(shell).isThrownBy(() -> arguments(shell, demo, scratch));
  }

  /** The folder above the working directory (Maven: the module's) that holds README.md and docs/. */
  static Path repositoryRoot() {
    for (Path p = Path.of("").toAbsolutePath(); p != null; p = p.getParent()) {
      if (Files.isRegularFile(p.resolve("README.md")) && Files.isDirectory(p.resolve("docs/commands"))) return p;
    }
    throw new IllegalStateException("no folder above " + Path.of("").toAbsolutePath() + " holds README.md and docs/commands");
  }

  static List<Path> docs(Path root) throws IOException {
    List<Path> docs = new ArrayList<>(List.of(root.resolve("README.md")));
    try (Stream<Path> s = Files.walk(root.resolve("docs"))) {
      s.filter(p -> p.toString().endsWith(".md")).sorted().forEach(docs::add);
    }
    return docs;
  }

  /**
   * The demo examples of one page: command lines in fenced blocks, continuations joined, and the
   * commands of {@code <!-- output of: ... -->} lines with the block after them.
   */
  static List<Example> examples(String file, List<String> lines) {
    List<Example> out = new ArrayList<>();
    boolean fenced = false;
    for (int i = 0; i < lines.size(); i++) {
      String line = lines.get(i).strip();
      if (line.startsWith("```")) {
        fenced = !fenced;
        continue;
      }
      if (!fenced) {
        Matcher q = QUOTES.matcher(line);
        if (q.matches()) out.add(quote(file, lines, i, q.group(1)));
        continue;
      }
      int first = i;
      StringBuilder joined = new StringBuilder();
      while (line.endsWith("\\") && i + 1 < lines.size()) {
        joined.append(line, 0, line.length() - 1).append(' ');
        line = lines.get(++i).strip();
      }
      String text = joined.append(line).toString().replaceAll("\\s+", " ");
      int hash = commentStart(text);
      String command = (hash < 0 ? text : text.substring(0, hash)).strip();
      boolean runs = command.startsWith("bin/actindex ") || command.startsWith("printf ");
      if (!runs || !command.contains("actindex-demo/")) continue;
      Matcher m = EXIT.matcher(hash < 0 ? "" : text.substring(hash));
      out.add(new Example(file, first + 1, command, m.find() ? Integer.parseInt(m.group(1)) : 0));
    }
    return out;
  }

  /** The example of an {@code <!-- output of: TEXT -->} line, with the fenced block that follows it. */
  private static Example quote(String file, List<String> lines, int at, String text) {
    String where = file + ":" + (at + 1);
    int hash = commentStart(text);
    String command = (hash < 0 ? text : text.substring(0, hash)).strip().replaceAll("\\s+", " ");
    if (!command.equals(DEMO) && !(command.startsWith("bin/actindex ") && command.contains("actindex-demo/"))) {
      throw new IllegalStateException(where + ": an output quote names a command that is not a demo example: " + command);
    }
    int open = at + 1;
    while (open < lines.size() && lines.get(open).isBlank()) open++;
    int close = open + 1;
    while (close < lines.size() && !lines.get(close).strip().startsWith("```")) close++;
    if (open >= lines.size() || !lines.get(open).strip().startsWith("```") || close >= lines.size()) {
      throw new IllegalStateException(where + ": an output quote is not followed by a fenced block");
    }
    Matcher m = EXIT.matcher(hash < 0 ? "" : text.substring(hash));
    return new Example(file, at + 1, command, m.find() ? Integer.parseInt(m.group(1)) : 0,
        String.join("\n", lines.subList(open + 1, close)));
  }

  /** Where an unquoted {@code #} starts a word (a shell comment), or -1. */
  private static int commentStart(String s) {
    char quote = 0;
    for (int i = 0; i < s.length(); i++) {
      char c = s.charAt(i);
      if (quote != 0) {
        if (c == quote) quote = 0;
      } else if (c == '"' || c == '\'') {
        quote = c;
      } else if (c == '#' && (i == 0 || Character.isWhitespace(s.charAt(i - 1)))) {
        return i;
      }
    }
    return -1;
  }

  /**
   * The arguments after {@code bin/actindex}: shell words (plain double and single quotes), with
   * {@code actindex-demo} replaced by {@code demo} and output values moved into {@code scratch}.
   * Refuses what an in-process run cannot do (redirections, pipes, variables, globs).
   */
  static String[] arguments(String command, Path demo, Path scratch) {
    List<String> words = new ArrayList<>();
    StringBuilder word = null;
    char quote = 0;
    for (char c : command.substring("bin/actindex ".length()).toCharArray()) {
      if (quote != 0) {
        if (c == quote) quote = 0;
        else word.append(c);
      } else if (c == '"' || c == '\'') {
        quote = c;
        if (word == null) word = new StringBuilder();
      } else if (Character.isWhitespace(c)) {
        if (word != null) words.add(word.toString());
        word = null;
      } else if ("<>|;&$*?`\\".indexOf(c) >= 0) {
        throw new IllegalArgumentException("shell syntax '" + c + "'");
      } else {
        if (word == null) word = new StringBuilder();
        word.append(c);
      }
    }
    if (quote != 0) throw new IllegalArgumentException("unclosed quote");
    if (word != null) words.add(word.toString());
    String[] args = words.toArray(String[]::new);
    for (int i = 0; i < args.length; i++) {
      if (args[i].equals("actindex-demo") || args[i].startsWith("actindex-demo/")) {
        args[i] = demo.resolve(args[i].substring("actindex-demo".length()).replaceFirst("^/", "")).toString();
      } else if (i > 0 && (OUTPUTS.contains(args[i - 1]) || args[0].equals("export-codes") && EXPORT_CODES_OUTPUTS.contains(args[i - 1]))) {
        if (Path.of(args[i]).isAbsolute()) throw new IllegalArgumentException("absolute output path " + args[i]);
        args[i] = scratch.resolve(args[i]).toString();
      }
    }
    return args;
  }

  /** A file a {@code printf} line of the docs writes, and its text. */
  record Written(Path file, String text) {}

  private static final Pattern PRINTF = Pattern.compile("printf '([^'%]*)' > actindex-demo/([\\w.-]+)");

  /**
   * What {@code printf 'TEXT' > actindex-demo/FILE} writes: TEXT in single quotes with no {@code %}
   * and no escapes but {@code \n}, {@code \t} and a doubled backslash, FILE a plain name in the demo
   * folder.
   * Refuses any other form.
   */
  static Written printf(String command, Path demo) {
    Matcher m = PRINTF.matcher(command);
    if (!m.matches() || m.group(2).startsWith(".")) {
      throw new IllegalArgumentException("only printf 'TEXT' > actindex-demo/FILE is run");
    }
    StringBuilder text = new StringBuilder();
    String t = m.group(1);
    for (int i = 0; i < t.length(); i++) {
      char c = t.charAt(i);
      if (c != '\\') {
        text.append(c);
        continue;
      }
      char next = ++i < t.length() ? t.charAt(i) : 0;
      switch (next) {
        case 'n' -> text.append('\n');
        case 't' -> text.append('\t');
        case '\\' -> text.append('\\');
        default -> throw new IllegalArgumentException("printf escape other than \\n, \\t, \\\\");
      }
    }
    return new Written(demo.resolve(m.group(2)), text.toString());
  }

  private static String[] run(String... args) {
    StringWriter out = new StringWriter(), err = new StringWriter();
    int code = Main.run(new PrintWriter(out), new PrintWriter(err), args);
    return new String[] {Integer.toString(code), out.toString(), err.toString()};
  }

  private static Path copyTree(Path from, Path to) throws IOException {
    Files.createDirectories(to.getParent());
    try (Stream<Path> s = Files.walk(from)) {
      s.forEach(p -> {
        try {
          Files.copy(p, to.resolve(from.relativize(p).toString()));
        } catch (IOException e) {
          throw new UncheckedIOException(e);
        }
      });
    }
    return to;
  }
}
