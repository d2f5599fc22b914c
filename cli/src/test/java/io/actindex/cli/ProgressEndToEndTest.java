package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.SplittableRandom;
import java.util.regex.Pattern;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The progress bars of {@code check}, {@code census} and {@code compact}: on stderr only, and only
 * when stderr is a terminal (here the launcher's word, {@code -Dactindex.stderr.tty}, decides).
 * Each command runs on two copies of one index, once told stderr is a pipe and once a terminal:
 * stdout is byte for byte the same, and stderr only gains the bar, one line ending in 100%.
 */
class ProgressEndToEndTest {
  private static final String TTY = "actindex.stderr.tty";

  @TempDir Path tmp;

  @Test
  void barsGoToStderrOnATerminalOnly() throws Exception {
    SplittableRandom rnd = new SplittableRandom(5);
    boolean[][] codes = new boolean[400][40];
    for (boolean[] c : codes) for (int b = 0; b < c.length; b++) c[b] = rnd.nextInt(b % 4 == 0 ? 8 : 2) == 0;
    List<String> meta = new ArrayList<>(List.of("key,label"));
    for (int i = 0; i < codes.length; i++) meta.add("k" + i + "," + (i % 5 == 0 ? "a" : "b")); // a fifth: below the share a delete rewrites at
    Path piped = tmp.resolve("piped"), terminal = tmp.resolve("terminal");
    ok(Cli.run("build", "--out", piped.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), codes).toString(),
        "--code-layout", "h1:24,h2:16", "--meta", Files2.text(tmp.resolve("m.csv"), meta).toString()));
    ok(Cli.run("delete", "--index", piped.toString(), "--where", "label = a"));
    copy(piped, terminal);

    // check: the manifest, codes and tables, tombstones, metadata, cross-file check
    same("checking files", 6, "check", "--index");
    // census over h1 then h1+h2
    same("counting regions (layer prefixes)", 2, "census", "--format", "json", "--index");
    // compact: 400 codes read, 320 live ones written
    same("compacting (codes read, then written)", 720, "compact", "--index");
    // nothing left to compact: no bar at all
    same(null, 0, "compact", "--index");
    assertThat(Files2.checksums(terminal).keySet()).isEqualTo(Files2.checksums(piped).keySet());
  }

  /** Runs {@code args} + the index on the piped copy without a bar and on the terminal copy with one. */
  private void same(String task, long steps, String... args) {
    Cli.Result plain = run("false", "piped", args), barred = run("true", "terminal", args);
    assertThat(barred.out().replace("terminal", "piped")).as(barred.describe()).isEqualTo(plain.out());
    assertThat(plain.err()).as(plain.describe()).doesNotContain("\r");
    if (task == null) {
      assertThat(barred.err()).as(barred.describe()).isEqualTo(plain.err().replace("piped", "terminal"));
      return;
    }
    String err = barred.err();
    int end = err.indexOf('\n');
    assertThat(end).as(barred.describe()).isPositive();
    String bar = err.substring(0, end);
    assertThat(bar).as(barred.describe()).startsWith("\r" + task + " [");
    String full = String.format(Locale.ROOT, "100%% %,d/%,d", steps, steps); // the last drawing, redrawn on closing
    assertThat(bar.substring(bar.lastIndexOf('\r'))).as(barred.describe())
        .matches(Pattern.quote("\r" + task + " [" + "=".repeat(30) + "] " + full + " ") + "[0-9.]+s\u001b\\[K");
    assertThat(err.substring(end + 1)).as(barred.describe()).isEqualTo(plain.err().replace("piped", "terminal"));
  }

  private Cli.Result run(String tty, String copy, String... args) {
    List<String> all = new ArrayList<>(List.of(args));
    all.add(tmp.resolve(copy).toString());
    String before = System.getProperty(TTY);
    System.setProperty(TTY, tty);
    try {
      return ok(Cli.run(all.toArray(String[]::new)));
    } finally {
      if (before == null) System.clearProperty(TTY);
      else System.setProperty(TTY, before);
    }
  }

  private static Cli.Result ok(Cli.Result r) {
    assertThat(r.code()).as(r.describe()).isZero();
    return r;
  }

  private static void copy(Path from, Path to) throws IOException {
    try (Stream<Path> all = Files.walk(from)) {
      for (Path p : (Iterable<Path>) all::iterator) {
        Path t = to.resolve(from.relativize(p).toString());
        if (Files.isDirectory(p)) Files.createDirectories(t);
        else Files.copy(p, t);
      }
    }
  }
}
