package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.IOException;
import java.io.OutputStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Assumptions;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;

/**
 * A real full disk through {@code Main.run}: every command that writes (build, add, ood calibrate,
 * ood eval --html/--roc, export-edge, dupes --pairs) exits 2 with one line naming the index folder
 * or the output file and "no space left on device", and leaves the index byte-identical and no
 * temporary file. Needs a small file system that only this test writes to (making one takes
 * root, so the test does not): give its folder as {@code -Dactindex.test.smallFs=DIR}, e.g. after
 * {@code mount -t tmpfs -o size=1m tmpfs DIR} (at least 1 MiB). Without it the test is skipped; the mapping itself
 * is tested everywhere by {@code DiskFullTest}, {@code WriteFailureTest} and {@code ErrorHandlerTest}.
 * The free space is stepped up page by page, so the add fails at every point of its commit (segment
 * files, Lucene's files, the manifest) until it fits. Run it once more under another system language
 * (e.g. {@code LC_ALL=de_DE.UTF-8} after {@code localedef -i de_DE -f UTF-8 de_DE.UTF-8}): the JDK then
 * reports the system's translated text, and the refusals must not change.
 */
@Tag("slow")
class DiskFullEndToEndTest {
  static final String PROPERTY = "actindex.test.smallFs";

  @Test
  void everyWriterRefusesAFullDiskAndTheIndexStaysAsItWas() throws IOException {
    String fs = System.getProperty(PROPERTY);
    Assumptions.assumeTrue(fs != null && !fs.isBlank(), "-D" + PROPERTY + "=DIR not given");
    Path root = Files.createDirectories(Path.of(fs).resolve("actindex-disk-full-test"));
    Path local = Files.createTempDirectory("actindex-disk-full");
    try {
      run(root, local);
    } finally {
      delete(root);
      delete(local);
    }
  }

  private static void run(Path root, Path local) throws IOException {
    boolean[][] train = OodEndToEndTest.rows(300, 0.05, 1), more = OodEndToEndTest.rows(200, 0.05, 7);
    Path trainF = Files2.bits(local.resolve("train.npy"), train), moreF = Files2.bits(local.resolve("more.npy"), more);
    Path cal = Files2.bits(local.resolve("cal.npy"), OodEndToEndTest.rows(60, 0.05, 2));
    StringBuilder meta = new StringBuilder("key,label\n");
    for (int i = 0; i < more.length; i++) meta.append("m").append(i).append(",").append(i % 4 == 0 ? "odd" : "even").append('\n');
    Path metaF = Files.writeString(local.resolve("more.csv"), meta);
    Path idx = root.resolve("idx");
    Cli.Result b = Cli.run("build", "--out", idx.toString(), "--codes", trainF.toString());
    assertThat(b.code()).as(b.describe()).isZero();
    assertThat(Cli.run("ood", "calibrate", "--index", idx.toString(), "--codes", cal.toString()).code()).isZero();
    Map<String, String> before = Files2.checksums(idx);
    Path filler = root.resolve("filler");

    String i = idx.toString();
    refused(before, idx, "index " + root.resolve("idx2"), "build", "--out", root.resolve("idx2").toString(), "--codes", trainF.toString());
    assertThat(root.resolve("idx2")).doesNotExist();
    refused(before, idx, "index " + idx, "ood", "calibrate", "--index", i, "--codes", cal.toString(), "-k", "2");
    refused(before, idx, root.resolve("e.html").toString(), "ood", "eval", "--index", i, "--in", cal.toString(), "--out", moreF.toString(),
        "--kind", "codes", "--html", root.resolve("e.html").toString());
    refused(before, idx, root.resolve("r.csv").toString(), "ood", "eval", "--index", i, "--in", cal.toString(), "--out", moreF.toString(),
        "--kind", "codes", "--roc", root.resolve("r.csv").toString());
    refused(before, idx, root.resolve("b.edge").toString(), "export-edge", "--index", i, "--out", root.resolve("b.edge").toString());
    refused(before, idx, root.resolve("p.csv").toString(), "dupes", "--index", i, "--radius", "40", "--pairs", root.resolve("p.csv").toString());

    // the add with metadata, with the free space stepped up until it fits: it fails inside the
    // segment files, inside Lucene's commit and at the manifest, and each time changes nothing
    List<Long> failedAt = new ArrayList<>();
    for (long free = 0; ; free += 4096) {
      fill(filler, free);
      Cli.Result r = Cli.run("add", "--index", i, "--codes", moreF.toString(), "--meta", metaF.toString());
      if (r.code() == 0) break;
      failedAt.add(free);
      assertThat(r.code()).as(free + " bytes free: " + r.describe()).isEqualTo(2);
      assertThat(r.err().strip().lines().toList()).as(r.describe()).hasSize(1).first().asString()
          .startsWith("actindex add: index " + idx + ": no space left on device (").contains("the index is as it was");
      assertThat(Files2.checksums(idx)).as(free + " bytes free").isEqualTo(before);
      assertThat(free).as("the add never fit").isLessThan(Files.getFileStore(root).getTotalSpace());
    }
    assertThat(failedAt.size()).as("free space steps that failed").isGreaterThan(2);
    Files.delete(filler);
    Cli.Result n = Cli.run("nearest", "--index", i, "--codes", moreF.toString(), "--rows", "0:1", "-k", "1", "--format", "csv");
    assertThat(n.code()).as(n.describe()).isZero();
    assertThat(n.out()).contains("m0");
  }

  /** Exit 2, one line naming {@code where} and the full disk; the index unchanged; nothing left in the folder. */
  private static void refused(Map<String, String> before, Path idx, String where, String... args) throws IOException {
    fill(idx.resolveSibling("filler"), 0); // full right before the command
    Cli.Result r = Cli.run(args);
    assertThat(r.code()).as(r.describe()).isEqualTo(2);
    assertThat(r.err().strip().lines().toList()).as(r.describe()).hasSize(1).first().asString().contains(where + ": no space left on device (");
    assertThat(Files2.checksums(idx)).as(r.describe()).isEqualTo(before);
    try (var s = Files.list(idx.getParent())) {
      assertThat(s.map(p -> p.getFileName().toString()).sorted().toList()).as(r.describe()).containsExactly("filler", "idx");
    }
  }

  /** Grows {@code filler} until the file system is full, then shrinks it to leave about {@code free} bytes. */
  private static void fill(Path filler, long free) throws IOException {
    Files.deleteIfExists(filler);
    long written = 0;
    byte[] block = new byte[4096];
    try (OutputStream out = Files.newOutputStream(filler)) {
      while (true) {
        out.write(block);
        out.flush();
        written += block.length;
      }
    } catch (IOException full) {
      assertThat(io.actindex.core.DiskFull.in(full, filler)).as(full.toString()).isTrue();
    }
    try (var ch = java.nio.channels.FileChannel.open(filler, java.nio.file.StandardOpenOption.WRITE)) {
      ch.truncate(Math.max(0, written - free));
    }
  }

  private static void delete(Path dir) throws IOException {
    if (!Files.exists(dir)) return;
    try (var walk = Files.walk(dir)) {
      for (Path p : walk.sorted(java.util.Comparator.reverseOrder()).toList()) Files.delete(p);
    }
  }
}
