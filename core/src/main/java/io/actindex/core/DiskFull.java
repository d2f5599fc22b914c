package io.actindex.core;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Locale;

/**
 * A write that failed because the file system is full (or the user's quota is used up). The JDK
 * reports it as a plain {@link IOException} carrying the operating system's text, without the
 * file's name ("No space left on device" for ENOSPC on Linux and macOS, "Disk quota exceeded" for
 * EDQUOT, "There is not enough space on the disk" on Windows), so the writer that knows the file or
 * folder turns it into a refusal naming it (exit code 2): the user can free space and run again.
 * The text is translated where the system's language is not English, so a writer that knows where
 * it wrote also asks the file system: an I/O error while that file system has (almost) nothing left
 * for us is a full disk too ({@link #in(Throwable, Path)}).
 */
public final class DiskFull {
  private DiskFull() {}

  private static final String[] TEXTS = {"no space left on device", "disk quota exceeded", "not enough space on the disk"};

  /** Free bytes under which an I/O error counts as a full disk: a write fails with ENOSPC when less than one block is left. */
  static final long NEARLY_FULL = 1 << 20;

  /** True when {@code t}, a cause or a suppressed exception of it is the file system's "no space" error (by its English text). */
  public static boolean in(Throwable t) {
    return in(t, 0);
  }

  /**
   * True when {@link #in(Throwable)} or when {@code t} holds an I/O error and the file system of
   * {@code where} (or of its nearest existing parent) has less than 1 MiB usable: the same answer in
   * any system language. Call it before removing what the failed write left.
   */
  public static boolean in(Throwable t, Path where) {
    return in(t) || nearlyFull(t, usableBytes(where));
  }

  /** An I/O error in {@code t}'s chain while only {@code usable} bytes are left. */
  static boolean nearlyFull(Throwable t, long usable) {
    return usable < NEARLY_FULL && hasIoError(t, 0);
  }

  private static boolean hasIoError(Throwable t, int depth) {
    if (t == null || depth > 16) return false;
    if (t instanceof IOException) return true;
    for (Throwable s : t.getSuppressed()) if (hasIoError(s, depth + 1)) return true;
    return t.getCause() != t && hasIoError(t.getCause(), depth + 1);
  }

  /** Bytes this process may still write on the file system of {@code where}; {@link Long#MAX_VALUE} when unknown. */
  static long usableBytes(Path where) {
    for (Path p = where == null ? null : where.toAbsolutePath(); p != null; p = p.getParent()) {
      if (!Files.exists(p)) continue;
      try {
        return Files.getFileStore(p).getUsableSpace();
      } catch (IOException | RuntimeException e) {
        return Long.MAX_VALUE;
      }
    }
    return Long.MAX_VALUE;
  }

  /** The refusal {@link #refusal} makes: recognised by {@link #in(Throwable)} whatever the system's text. */
  private static final class Refusal extends BadInputException {
    Refusal(String message, Throwable cause) {
      super(message, cause);
    }
  }

  private static boolean in(Throwable t, int depth) {
    if (t == null || depth > 16) return false;
    if (t instanceof Refusal) return true;
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
    return new Refusal(where + ": no space left on device (" + systemText(cause) + "); " + outcome + "; free some space and run again", cause);
  }

  /** The system's own words: its English "no space" text where present, else the first I/O error's (another language). */
  private static String systemText(Throwable t) {
    String first = null;
    for (Throwable c = t; c != null; c = c.getCause() == c ? null : c.getCause()) {
      if (c instanceof IOException && c.getMessage() != null) {
        String m = c.getMessage().toLowerCase(Locale.ROOT);
        String text = c instanceof java.nio.file.FileSystemException f && f.getReason() != null ? f.getReason() : c.getMessage();
        for (String s : TEXTS) if (m.contains(s)) return BadInputException.snippet(text, 80);
        if (first == null) first = text;
      }
      for (Throwable s : c.getSuppressed()) if (in(s, 0)) return systemText(s);
    }
    return first != null ? BadInputException.snippet(first, 80) : "the file system is full";
  }
}
