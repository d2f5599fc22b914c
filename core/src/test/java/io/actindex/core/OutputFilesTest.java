package io.actindex.core;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.io.IOException;
import java.nio.channels.FileChannel;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.nio.file.attribute.FileTime;
import java.time.Instant;
import java.util.List;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * An output file never lands in an index folder: 'report --out idx/manifest-6' replaced the
 * manifest with HTML (the index was lost), and 'export-edge --c-source idx' or 'dupes --pairs
 * idx/x.csv' added files to a folder whose files only the index's writer may touch.
 */
class OutputFilesTest {
  @TempDir Path tmp;

  @Test
  void targetsInsideAnIndexFolderAreRefusedAndNothingIsWritten() throws IOException {
    Path idx = Files.createDirectories(tmp.resolve("idx"));
    Files.write(idx.resolve("manifest-6"), new byte[] {1, 2, 3});
    Path meta = Files.createDirectories(idx.resolve("meta"));
    for (Path target : new Path[] {idx.resolve("manifest-6"), idx.resolve("report.html"), meta.resolve("x.csv")}) {
      assertThatThrownBy(() -> OutputFiles.write(target, new byte[] {9}, "--out")).as(target.toString())
          .isInstanceOf(BadInputException.class).hasMessageContaining(target.toString()).hasMessageContaining("index folder")
          .hasMessageContaining("--out");
    }
    assertThat(Files.readAllBytes(idx.resolve("manifest-6"))).containsExactly(1, 2, 3);
    try (var files = Files.list(idx)) {
      assertThat(files.map(p -> p.getFileName().toString())).containsExactlyInAnyOrder("manifest-6", "meta");
    }
    assertThat(meta.toFile().list()).isEmpty();
    // a folder with only a lock file is an index folder too (an index being built); other folders are fine
    Path building = Files.createDirectories(tmp.resolve("building"));
    Files.createFile(building.resolve("writer.lock"));
    assertThatThrownBy(() -> OutputFiles.checkTarget(building.resolve("r.html"), "--html")).isInstanceOf(BadInputException.class);
    Path plain = Files.createDirectories(tmp.resolve("reports"));
    Files.writeString(plain.resolve("manifest-notes.txt"), "x");
    OutputFiles.write(plain.resolve("r.html"), new byte[] {7}, "--out");
    assertThat(Files.readAllBytes(plain.resolve("r.html"))).containsExactly(7);
  }

  /**
   * An output that is one of the command's inputs would replace it: 'report --out a.npy
   * --compare-a a.npy' turned the sample into HTML. Refused under every name of the same file.
   */
  @Test
  void aTargetThatIsAnInputIsRefusedUnderAnyOfItsNames() throws IOException {
    Path input = Files.write(tmp.resolve("a.npy"), new byte[] {1, 2, 3});
    Path other = Files.write(tmp.resolve("b.npy"), new byte[] {4});
    Path link = Files.createSymbolicLink(tmp.resolve("link.npy"), input);
    Path hard = Files.createLink(tmp.resolve("hard.npy"), input);
    Path dotted = tmp.resolve(".").resolve("a.npy");
    for (Path target : new Path[] {input, link, hard, dotted}) {
      assertThatThrownBy(() -> OutputFiles.checkTarget(target, "--out", new OutputFiles.Input("--compare-b", other),
          new OutputFiles.Input("--compare-a", input))).as(target.toString()).isInstanceOf(BadInputException.class)
          .hasMessageStartingWith(target + ": --out is the same file as the input --compare-a (" + input + ")");
      // the input named through the other spelling is caught too
      assertThatThrownBy(() -> OutputFiles.checkNotInput(input, "--html", new OutputFiles.Input("--in", target)))
          .isInstanceOf(BadInputException.class).hasMessageContaining("--html").hasMessageContaining("--in");
    }
    assertThat(Files.readAllBytes(input)).containsExactly(1, 2, 3);
    // relative names of a file that does not exist yet: compared as normalized absolute paths
    Path rel = Path.of("not-there-" + System.nanoTime() + ".csv");
    assertThatThrownBy(() -> OutputFiles.checkNotInput(Path.of(".", rel.toString()), "--pairs", new OutputFiles.Input("--against", rel)))
        .isInstanceOf(BadInputException.class).hasMessageContaining("--pairs").hasMessageContaining("--against");
    // a different file, or no input, is fine
    OutputFiles.checkTarget(tmp.resolve("c.html"), "--out", new OutputFiles.Input("--compare-a", input), new OutputFiles.Input("--x", null));
    OutputFiles.checkTarget(other, "--out", new OutputFiles.Input("--compare-a", input));
  }

  /**
   * 'build --out idx/sub' put a second index inside the first: every folder above the new one is
   * looked at, and output files deep inside an index folder are refused the same way.
   */
  @Test
  void aNewIndexInsideAnIndexFolderIsRefusedAtAnyDepth() throws IOException {
    Path idx = Files.createDirectories(tmp.resolve("idx"));
    Files.write(idx.resolve("manifest-2"), new byte[] {1});
    for (Path dir : new Path[] {idx.resolve("sub"), idx.resolve("meta").resolve("x"), idx.resolve("a").resolve("b").resolve("c")}) {
      assertThatThrownBy(() -> OutputFiles.checkIndexPlace(dir, "--out")).as(dir.toString()).isInstanceOf(BadInputException.class)
          .hasMessageStartingWith(dir + ": is inside the index folder " + idx).hasMessageContaining("--out");
      assertThat(OutputFiles.indexAbove(dir)).isEqualTo(idx);
    }
    assertThatThrownBy(() -> OutputFiles.checkOutsideIndex(idx.resolve("a").resolve("b").resolve("r.html"), "--out"))
        .isInstanceOf(BadInputException.class).hasMessageContaining("index folder");
    assertThat(Files.exists(idx.resolve("sub"))).isFalse();
    // beside the index, or an index folder itself (build refuses it as not empty), is not inside one
    OutputFiles.checkIndexPlace(tmp.resolve("idx2"), "--out");
    OutputFiles.checkIndexPlace(idx, "--out");
    assertThat(OutputFiles.indexAbove(tmp.resolve("idx2").resolve("deeper"))).isNull();
  }

  /**
   * A write killed between creating its temporary file and renaming it left {@code .NAME.RANDOM.tmp}
   * beside the target for good. The next write of the same target removes such a file once no
   * process holds its lock and it has gone unmodified for {@link OutputFiles#STALE_AFTER} (its time
   * is set back here); a file another live process is writing stays, and so do files of other
   * targets and names that only look alike. Real processes: a child JVM killed with SIGKILL.
   */
  @Test
  void aKilledWritersTemporaryFileIsRemovedByTheNextWriteButALiveWritersStays() throws Exception {
    Path target = tmp.resolve("r.html");
    Path old = tmp.resolve(".r.html.oldleftover.tmp"); // unlocked and old: a leftover
    Path fresh = tmp.resolve(".r.html.fresh.tmp"); // unlocked but just modified: may be a writer about to lock it
    List<Path> others = List.of(tmp.resolve(".s.html.abc.tmp"), tmp.resolve(".r.html.ABC.tmp"), tmp.resolve(".r.html.a-b.tmp"),
        tmp.resolve(".r.html.abc.tmp.keep"), tmp.resolve("r.html.abc.tmp"), tmp.resolve(".r.html..tmp"));
    for (Path f : others) setBack(Files.write(f, new byte[] {5}));
    setBack(Files.write(old, new byte[] {5}));
    Files.write(fresh, new byte[] {5});

    Process child = start(target, tmp.resolve("ready"));
    try {
      Path childs = Path.of(awaitReady(child, tmp.resolve("ready")));
      setBack(childs); // old, but locked by a live process
      try (OutputFiles.Temp mine = OutputFiles.begin(target)) { // this JVM's own write in progress, old too
        setBack(mine.path());
        OutputFiles.write(target, new byte[] {7}, "--out");
        assertThat(Files.readAllBytes(target)).containsExactly(7);
        assertThat(old).doesNotExist();
        assertThat(childs).as("a live writer's file").exists();
        assertThat(mine.path()).as("this JVM's file being written").exists();
      }
      assertThat(fresh).exists();
      for (Path f : others) assertThat(f).exists();

      child.destroyForcibly(); // SIGKILL: no shutdown hook runs, the file stays, its lock goes
      assertThat(child.waitFor(60, TimeUnit.SECONDS)).isTrue();
      assertThat(childs).exists();
      OutputFiles.write(target, new byte[] {8}, "--out");
      assertThat(Files.readAllBytes(target)).containsExactly(8);
      assertThat(childs).doesNotExist();
      assertThat(fresh).exists();
      for (Path f : others) assertThat(f).exists();
    } finally {
      child.destroyForcibly();
    }
  }

  /**
   * Earlier calibrate-planner versions wrote through {@link Files#createTempFile}(folder, NAME, ".tmp"):
   * {@code NAME} + an unsigned long in decimal + {@code .tmp}, never locked. Such a file is removed
   * once unmodified for {@link OutputFiles#STALE_AFTER} and not locked; every other name stays,
   * however old, and so does a young one and one this JVM holds locked.
   */
  @Test
  void earlierVersionsCreateTempFilesAreRemovedWhenStale() throws IOException {
    Path target = tmp.resolve("costs.properties");
    Files.write(target, new byte[] {1});
    // Files.createTempFile's own name for this target, so that the pattern is the JDK's and not a guess
    Path made = Files.createTempFile(tmp, "costs.properties", ".tmp");
    List<Path> stale = List.of(made, tmp.resolve("costs.properties0.tmp"), tmp.resolve("costs.properties18446744073709551615.tmp"));
    for (Path f : stale) setBack(Files.write(f, new byte[] {5}));
    Path fresh = Files.write(tmp.resolve("costs.properties77.tmp"), new byte[] {5});
    Path locked = setBack(Files.write(tmp.resolve("costs.properties78.tmp"), new byte[] {5}));
    List<Path> others = List.of(tmp.resolve("costs.properties.tmp"), tmp.resolve("costs.properties12a.tmp"),
        tmp.resolve("costs.properties123456789012345678901.tmp"), tmp.resolve("costs.properties12.tmp.keep"),
        tmp.resolve("xcosts.properties12.tmp"), tmp.resolve("costs.propertie12.tmp"), tmp.resolve("other12.tmp"),
        tmp.resolve(".costs.properties12.tmp0"));
    for (Path f : others) setBack(Files.write(f, new byte[] {5}));
    Files.createDirectories(tmp.resolve("costs.properties99.tmp")); // a folder of that name: not a file to remove
    setBack(tmp.resolve("costs.properties99.tmp"));
    try (FileChannel ch = FileChannel.open(locked, StandardOpenOption.WRITE); var lock = ch.lock()) {
      OutputFiles.removeStaleCreateTempFiles(target);
    }
    for (Path f : stale) assertThat(f).as("stale").doesNotExist();
    assertThat(fresh).exists();
    assertThat(locked).exists();
    assertThat(tmp.resolve("costs.properties99.tmp")).isDirectory();
    for (Path f : others) assertThat(f).exists();
    assertThat(Files.readAllBytes(target)).containsExactly(1);
  }

  /**
   * Ctrl-C (SIGINT) or SIGTERM during a write: the JVM's shutdown hook deletes the temporary file.
   * A shell without job control starts a background command with SIGINT ignored (POSIX, "Shell
   * Command Language", section 2.11), the child inherits that and the JVM then installs no handler
   * for it: SIGINT is not tried when this JVM ignores it (SigIgn in /proc/self/status, Linux).
   */
  @Test
  void anInterruptedWriteDeletesItsTemporaryFile() throws Exception {
    for (String signal : sigintIgnored() ? new String[] {"TERM"} : new String[] {"INT", "TERM"}) {
      Path target = tmp.resolve(signal + ".html");
      Path ready = tmp.resolve("ready-" + signal);
      Process child = start(target, ready);
      try {
        Path childs = Path.of(awaitReady(child, ready));
        assertThat(childs).exists();
        Process kill = new ProcessBuilder("kill", "-" + signal, Long.toString(child.pid())).inheritIO().start();
        assertThat(kill.waitFor(60, TimeUnit.SECONDS) && kill.exitValue() == 0).as("kill -" + signal).isTrue();
        assertThat(child.waitFor(60, TimeUnit.SECONDS)).as(signal).isTrue();
        assertThat(childs).as(signal).doesNotExist();
        assertThat(target).as(signal).doesNotExist();
      } finally {
        child.destroyForcibly();
      }
    }
  }

  /** Whether this process ignores SIGINT (signal 2: bit 1 of SigIgn); false where /proc is missing. */
  private static boolean sigintIgnored() throws IOException {
    Path status = Path.of("/proc/self/status");
    if (!Files.isReadable(status)) return false;
    for (String line : Files.readAllLines(status))
      if (line.startsWith("SigIgn:")) return (Long.parseUnsignedLong(line.substring(7).trim(), 16) & 2) != 0;
    return false;
  }

  private static Path setBack(Path f) throws IOException {
    return Files.setLastModifiedTime(f, FileTime.from(Instant.now().minus(OutputFiles.STALE_AFTER).minusSeconds(60)));
  }

  private static Process start(Path target, Path ready) throws IOException {
    String java = Path.of(System.getProperty("java.home"), "bin", "java").toString();
    return new ProcessBuilder(java, "-Xmx64m", "-XX:TieredStopAtLevel=1", "-cp", System.getProperty("java.class.path"),
        OutputFilesChild.class.getName(), target.toString(), ready.toString())
        .redirectOutput(ProcessBuilder.Redirect.DISCARD).redirectError(ProcessBuilder.Redirect.INHERIT).start();
  }

  /** The child's temporary file, once it has written it (a minute at most). */
  private static String awaitReady(Process child, Path ready) throws Exception {
    long deadline = System.nanoTime() + TimeUnit.SECONDS.toNanos(60);
    while (!Files.exists(ready)) {
      if (!child.isAlive()) throw new AssertionError("child ended with " + child.exitValue() + " before it began writing");
      if (System.nanoTime() > deadline) throw new AssertionError("child did not begin writing within a minute");
      Thread.sleep(10);
    }
    return Files.readString(ready);
  }
}
