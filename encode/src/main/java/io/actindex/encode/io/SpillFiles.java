package io.actindex.encode.io;

import java.io.IOException;
import java.nio.file.DirectoryStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.regex.Matcher;
import java.util.regex.Pattern;

/**
 * Temporary copies of {@code .npz} members that must be read out of order (Fortran order: a
 * deflated stream cannot seek). They live in one folder, {@code actindex-spill-USER} under the
 * system temp folder (or the folder the system property {@code actindex.spill.dir} names), and
 * are named {@code PID-RANDOM.npy} after the process that made them. Each is deleted when its
 * reader closes, and at JVM exit (SIGTERM included); a process killed outright (SIGKILL, power loss)
 * leaves its files behind, and the next process that spills removes the files of every process
 * that is no longer running. Copies can be hundreds of MB, so none should stay behind for long.
 */
public final class SpillFiles {
  private SpillFiles() {}

  private static final Pattern NAME = Pattern.compile("(\\d+)-[^/]*\\.npy");
  private static boolean cleaned;

  /** The spill folder (not created). */
  public static Path folder() {
    String dir = System.getProperty("actindex.spill.dir");
    if (dir != null && !dir.isBlank()) return Path.of(dir);
    String user = System.getProperty("user.name", "user").replaceAll("[^A-Za-z0-9._-]", "_");
    return Path.of(System.getProperty("java.io.tmpdir"), "actindex-spill-" + user);
  }

  /** A new empty spill file of this process, deleted at JVM exit if its reader does not delete it first. */
  static Path create() throws IOException {
    Path dir = folder();
    Files.createDirectories(dir);
    cleanStale();
    Path f = Files.createTempFile(dir, ProcessHandle.current().pid() + "-", ".npy");
    f.toFile().deleteOnExit();
    return f;
  }

  /** Deletes the spill files of processes that no longer run (once per JVM; errors ignored). */
  public static synchronized void cleanStale() {
    if (cleaned) return;
    cleaned = true;
    Path dir = folder();
    if (!Files.isDirectory(dir)) return;
    try (DirectoryStream<Path> files = Files.newDirectoryStream(dir)) {
      for (Path f : files) {
        Matcher m = NAME.matcher(f.getFileName().toString());
        if (!m.matches()) continue;
        long pid;
        try {
          pid = Long.parseLong(m.group(1));
        } catch (NumberFormatException e) {
          continue;
        }
        if (ProcessHandle.of(pid).map(ProcessHandle::isAlive).orElse(false)) continue;
        try {
          Files.deleteIfExists(f);
        } catch (IOException ignored) {
          // another user's file or a race with another cleaner: leave it
        }
      }
    } catch (IOException ignored) {
      // the folder went away or cannot be listed: nothing to clean
    }
  }

  /** Lets a test run the clean-up again. */
  static synchronized void resetForTest() {
    cleaned = false;
  }
}
