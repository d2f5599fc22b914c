package io.actindex.encode.io;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.encode.Golden;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStreamReader;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.concurrent.TimeUnit;
import java.util.stream.Stream;
import java.util.zip.ZipEntry;
import java.util.zip.ZipOutputStream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A process that holds a spilled {@code .npz} member and is stopped: SIGTERM removes its spill
 * file at exit; SIGKILL leaves it, and the next process that reads an {@code .npz} removes it.
 */
class SpillKillTest {
  @TempDir Path tmp;

  private Path fortranNpz() throws IOException {
    Path f = tmp.resolve("fortran.npz");
    try (ZipOutputStream z = new ZipOutputStream(Files.newOutputStream(f))) {
      z.putNextEntry(new ZipEntry("f.npy"));
      z.write(Files.readAllBytes(Golden.path("f8_F_le.npy")));
      z.closeEntry();
    }
    return f;
  }

  private static List<Path> spilled(Path dir) throws IOException {
    if (!Files.isDirectory(dir)) return List.of();
    try (Stream<Path> s = Files.list(dir)) {
      return s.filter(p -> p.toString().endsWith(".npy")).toList();
    }
  }

  /** Starts a child holding the member open; returns once its spill file exists. */
  private Process child(Path npz, Path spill) throws Exception {
    String java = Path.of(System.getProperty("java.home"), "bin", "java").toString();
    Process p = new ProcessBuilder(java, "-Xmx64m", "-XX:TieredStopAtLevel=1", "-Dactindex.spill.dir=" + spill,
        "-cp", System.getProperty("java.class.path"), SpillChild.class.getName(), npz.toString(), "f")
        .redirectError(ProcessBuilder.Redirect.DISCARD).start();
    BufferedReader in = new BufferedReader(new InputStreamReader(p.getInputStream(), StandardCharsets.UTF_8));
    String line = in.readLine();
    assertThat(line).as("child opened the member").isEqualTo("open 5");
    assertThat(spilled(spill)).as("the child's spill file").hasSize(1);
    assertThat(spilled(spill).getFirst().getFileName().toString()).startsWith(p.pid() + "-");
    return p;
  }

  @Test
  void sigtermRemovesTheSpillFileSigkillLeavesItForTheNextRun() throws Exception {
    Path npz = fortranNpz();
    Path spill = tmp.resolve("spill");
    Process term = child(npz, spill);
    term.destroy(); // SIGTERM: shutdown hooks run
    assertThat(term.waitFor(30, TimeUnit.SECONDS)).isTrue();
    assertThat(spilled(spill)).as("removed at exit").isEmpty();

    Process kill = child(npz, spill);
    kill.destroyForcibly(); // SIGKILL: nothing runs
    assertThat(kill.waitFor(30, TimeUnit.SECONDS)).isTrue();
    assertThat(spilled(spill)).as("left behind by SIGKILL").hasSize(1);

    String old = System.getProperty("actindex.spill.dir");
    System.setProperty("actindex.spill.dir", spill.toString());
    try {
      SpillFiles.resetForTest();
      NpzReader.open(npz).close(); // the next run
      assertThat(spilled(spill)).as("cleaned by the next run").isEmpty();
    } finally {
      if (old == null) System.clearProperty("actindex.spill.dir");
      else System.setProperty("actindex.spill.dir", old);
      SpillFiles.resetForTest();
    }
  }
}
