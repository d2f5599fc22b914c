package io.actindex.core;

import java.io.IOException;
import java.util.Locale;

/**
 * A write that failed because the file system is full (or the user's quota is used up). The JDK
 * reports it as a plain {@link IOException} carrying the operating system's text, without the
 * file's name ("No space left on device" for ENOSPC on Linux and macOS, "Disk quota exceeded" for
 * EDQUOT, "There is not enough space on the disk" on Windows), so the writer that knows the file or
 * folder turns it into a refusal naming it (exit code 2): the user can free space and run again.
 */
public final class DiskFull {
  private DiskFull() {}

  private static final String[] TEXTS = {"no space left on device", "disk quota exceeded", "not enough space on the disk"};

  /** True when {@code t}, a cause or a suppressed exception of it is the file system's "no space" error. */
  public static boolean in(Throwable t) {
    return in(t, 0);
  }

  private static boolean in(Throwable t, int depth) {
    if (t == null || depth > 16) return false;
    if (t instanceof IOException && t.getMessage() != null) {
      String m = t.getMessage().toLowerCase(Locale.ROOT);
      for (String s : TEXTS) if (m.contains(s)) return true;
    }
    for (Throwable s : t.getSuppressed()) if (in(s, depth + 1)) return true;
    return t.getCause() != t && in(t.getCause(), depth + 1);
  }

  /**
   * The refusal: {@code "<where>: no space left on device (<the system's text>); <outcome>; free
   * some space and run again"}. {@code where} names the file or folder being written, {@code
   * outcome} what became of it (e.g. "the index is as it was").
   */
  public static BadInputException refusal(String where, String outcome, Throwable cause) {
    return new BadInputException(where + ": no space left on device (" + systemText(cause) + "); " + outcome + "; free some space and run again",
        cause);
  }

  private static String systemText(Throwable t) {
    for (Throwable c = t; c != null; c = c.getCause() == c ? null : c.getCause()) {
      if (c instanceof IOException && c.getMessage() != null) {
        String m = c.getMessage().toLowerCase(Locale.ROOT);
        String text = c instanceof java.nio.file.FileSystemException f && f.getReason() != null ? f.getReason() : c.getMessage();
        for (String s : TEXTS) if (m.contains(s)) return BadInputException.snippet(text, 80);
      }
      for (Throwable s : c.getSuppressed()) if (in(s)) return systemText(s);
    }
    return "the file system is full";
  }
}
