package io.actindex.cli;

import java.io.PrintWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Locale;

/**
 * A one-line progress bar on stderr for the query module's {@link io.actindex.query.Progress}
 * callbacks, drawn only when stderr is a terminal; otherwise it does nothing, so piped or captured
 * output carries nothing extra. Redrawn at most ten times a second.
 */
public final class Progress implements io.actindex.query.Progress, AutoCloseable {
  private static final int BAR = 30;
  private static final long REDRAW_NANOS = 100_000_000L;

  private final PrintWriter err;
  private final String task;
  private final boolean enabled;
  private final long startNanos = System.nanoTime();
  private long done, total = -1, lastDraw;
  private boolean drawn;

  /** A bar for {@code task} (e.g. "encoding rows") that draws only when {@code enabled}. */
  public Progress(PrintWriter err, String task, boolean enabled) {
    this.err = err;
    this.task = task;
    this.enabled = enabled;
  }

  /** A bar that draws only if stderr is a terminal. */
  public static Progress onTerminal(PrintWriter err, String task) {
    return new Progress(err, task, stderrIsTerminal());
  }

  /** {@code done} units of {@code total} ({@code total < 0}: unknown, shows a count). */
  @Override
  public synchronized void update(long done, long total) {
    if (!enabled) return;
    this.done = done;
    this.total = total;
    long now = System.nanoTime();
    if (!drawn || now - lastDraw >= REDRAW_NANOS || (total > 0 && done >= total)) {
      draw(now);
      lastDraw = now;
    }
  }

  /** Draws the final state and ends the line (only if something was drawn). */
  @Override
  public synchronized void close() {
    if (!enabled || !drawn) return;
    draw(System.nanoTime());
    err.print('\n');
    err.flush();
  }

  private void draw(long now) {
    drawn = true;
    double secs = (now - startNanos) / 1e9;
    String line;
    if (total > 0) {
      double f = Math.min(1.0, (double) done / total);
      int filled = (int) Math.round(f * BAR);
      line = String.format(Locale.ROOT, "%s [%s%s] %3d%% %,d/%,d %.1fs", task, "=".repeat(filled), " ".repeat(BAR - filled),
          (int) Math.floor(f * 100), done, total, secs);
    } else {
      line = String.format(Locale.ROOT, "%s %,d %.1fs", task, done, secs);
    }
    err.print('\r' + line + "\u001b[K");
    err.flush();
  }

  /**
   * True when file descriptor 2 is a terminal. The launcher {@code bin/actindex}, which filters
   * stderr through a pipe, says so in the system property {@code actindex.stderr.tty}; without it,
   * on Linux the link {@code /proc/self/fd/2} is read (a tty or pts device), elsewhere
   * {@link java.io.Console#isTerminal()} (which looks at stdin and stdout) decides.
   */
  public static boolean stderrIsTerminal() {
    String fd2Target = null;
    Path fd2 = Path.of("/proc/self/fd/2");
    try {
      if (Files.isSymbolicLink(fd2)) fd2Target = Files.readSymbolicLink(fd2).toString();
    } catch (Exception e) {
      // fall through to the portable check
    }
    return isTerminal(System.getProperty("actindex.stderr.tty"), fd2Target,
        () -> System.console() != null && System.console().isTerminal());
  }

  /**
   * The decision of {@link #stderrIsTerminal()}: what the launcher said ({@code told}, may be
   * null), else the target of {@code /proc/self/fd/2} (null where there is none), else the console.
   */
  static boolean isTerminal(String told, String fd2Target, java.util.function.BooleanSupplier console) {
    if (told != null) return Boolean.parseBoolean(told);
    if (fd2Target != null) return fd2Target.startsWith("/dev/pts/") || fd2Target.startsWith("/dev/tty");
    return console.getAsBoolean();
  }
}
