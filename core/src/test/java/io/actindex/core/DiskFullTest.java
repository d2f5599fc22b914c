package io.actindex.core;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.FileSystemException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.attribute.PosixFilePermissions;
import org.junit.jupiter.api.Assumptions;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The full-disk refusal: recognised by the operating system's text the JDK carries (taken from a
 * real write to Linux's {@code /dev/full}, which fails every write with ENOSPC, where it exists),
 * wrapped or suppressed, and turned into one line naming the file; {@link OutputFiles} leaves no
 * temporary file and an existing target unchanged.
 */
class DiskFullTest {
  @TempDir Path tmp;

  static IOException realEnospc() {
    Assumptions.assumeTrue(Files.isWritable(Path.of("/dev/full")), "no /dev/full on this system");
    return NoSpace.exception();
  }

  @Test
  void recognisesTheSystemsTextWrappedOrSuppressed() {
    IOException e = realEnospc();
    assertThat(e.getMessage()).containsIgnoringCase("no space left on device");
    assertThat(DiskFull.in(e)).isTrue();
    assertThat(DiskFull.in(new UncheckedIOException("cannot write x", e))).isTrue();
    RuntimeException outer = new IllegalStateException("closing");
    outer.addSuppressed(e);
    assertThat(DiskFull.in(outer)).isTrue();
    assertThat(DiskFull.in(new FileSystemException("a.bin", null, "Disk quota exceeded"))).isTrue();
    assertThat(DiskFull.in(new IOException("There is not enough space on the disk"))).isTrue(); // Windows' text
    assertThat(DiskFull.in(new IOException("Permission denied"))).isFalse();
    assertThat(DiskFull.in(new IllegalStateException("No space left on device"))).as("only I/O errors").isFalse();
    assertThat(DiskFull.in(null)).isFalse();
  }

  /**
   * In another system language the text is not English ("Auf dem Gerät ist kein Speicherplatz mehr verfügbar" is glibc's German
   * for ENOSPC: what the JDK printed for a write to /dev/full under LC_ALL=de_DE.UTF-8 on Debian, 2026-12-03): an I/O error while the file system has under 1 MiB left counts as a full disk, an I/O error on a
   * file system with room does not, and a refusal made once is still recognised after wrapping.
   */
  @Test
  void recognisesAFullFileSystemInAnyLanguage() throws IOException {
    IOException german = new IOException("Auf dem Gerät ist kein Speicherplatz mehr verfügbar");
    assertThat(DiskFull.in(german)).isFalse();
    assertThat(DiskFull.nearlyFull(german, 0)).isTrue();
    assertThat(DiskFull.nearlyFull(new UncheckedIOException("cannot write", german), 4096)).isTrue();
    assertThat(DiskFull.nearlyFull(german, DiskFull.NEARLY_FULL)).isFalse();
    assertThat(DiskFull.nearlyFull(new IllegalStateException("closing"), 0)).as("only I/O errors").isFalse();
    Assumptions.assumeTrue(DiskFull.usableBytes(tmp) > DiskFull.NEARLY_FULL, "the test's own disk is nearly full");
    assertThat(DiskFull.in(german, tmp.resolve("not/yet/there.bin"))).as("room left: an ordinary I/O error").isFalse();
    // the nearest existing folder's file system; other writers on the machine move its free space
    // between two readings, so only a change larger than they make fails (it once failed on equality)
    long before = Files.getFileStore(tmp).getUsableSpace(), seen = DiskFull.usableBytes(tmp.resolve("not/yet/there.bin")),
        after = Files.getFileStore(tmp).getUsableSpace(), slack = 1L << 28;
    assertThat(seen).isBetween(Math.min(before, after) - slack, Math.max(before, after) + slack);
    BadInputException r = DiskFull.refusal("out.csv", "not written", german);
    assertThat(r.getMessage()).isEqualTo("out.csv: no space left on device (Auf dem Gerät ist kein Speicherplatz mehr verfügbar); not written; "
        + "free some space and run again");
    assertThat(DiskFull.in(new IllegalStateException("wrapped", r))).isTrue();
  }

  @Test
  void refusalNamesThePlaceOnOneLine() {
    BadInputException r = DiskFull.refusal("out/page.html", "it was not written", new UncheckedIOException(realEnospc()));
    assertThat(r.getMessage()).isEqualTo("out/page.html: no space left on device (No space left on device); it was not written; "
        + "free some space and run again");
    assertThat(r.getCause()).isInstanceOf(UncheckedIOException.class);
  }

  /** The refusals before writing, the replacement, no temporary file left, and the umask's mode (not 0600). */
  @Test
  void outputFilesReplaceWholeFilesWithTheUmasksMode() throws IOException {
    Path target = Files.writeString(tmp.resolve("page.html"), "old");
    Path folder = Files.createDirectory(tmp.resolve("sub"));
    assertThatThrownBy(() -> OutputFiles.write(folder, new byte[] {1}, "--html")).isInstanceOf(BadInputException.class)
        .hasMessage(folder + ": is a folder; --html names a file");
    Path nowhere = tmp.resolve("missing").resolve("p.html");
    assertThatThrownBy(() -> OutputFiles.write(nowhere, new byte[] {1}, "--html")).isInstanceOf(BadInputException.class)
        .hasMessage(nowhere + ": its folder does not exist (--html)");
    OutputFiles.write(target, "new".getBytes(), "--html");
    assertThat(Files.readString(target)).isEqualTo("new");
    try (var s = Files.list(tmp)) {
      assertThat(s.map(p -> p.getFileName().toString())).containsExactlyInAnyOrder("page.html", "sub");
    }
    if (Files.getFileStore(tmp).supportsFileAttributeView("posix")) {
      Path plain = Files.createFile(tmp.resolve("plain"));
      assertThat(PosixFilePermissions.toString(Files.getPosixFilePermissions(target)))
          .isEqualTo(PosixFilePermissions.toString(Files.getPosixFilePermissions(plain)));
    }
  }
}
