package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.Randoms;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A real segment whose codes file is larger than 2 GiB (8.4M codes of 2048 bits, 2.15 GB; about
 * 2.3 GB of disk, removed afterwards), written and read back in a child JVM with a 3 GB heap:
 * codes stored past the 2 GiB offset, exact k-NN and radius answers through the reader against a
 * brute-force scan, and the full check ({@link LargeSegmentChild}). About a minute.
 */
class LargeSegmentTest {
  @TempDir Path tmp;

  @Test
  @Tag("slow")
  void segmentPastTwoGibReadsBackExactly() throws Exception {
    long seed = Randoms.seed(0);
    String java = Path.of(System.getProperty("java.home"), "bin", "java").toString();
    // G1 named: on one CPU the JVM would pick the serial collector, whose old generation (two
    // thirds of the heap) cannot hold the 2.15 GB array of codes
    Process p = new ProcessBuilder(java, "-Xmx3g", "-XX:+UseG1GC", "-cp", System.getProperty("java.class.path"),
        LargeSegmentChild.class.getName(), tmp.resolve("idx").toString(), Long.toString(seed), "8400000", "2048")
        .redirectErrorStream(true).start();
    byte[] out = p.getInputStream().readAllBytes();
    assertTrue(p.waitFor(20, TimeUnit.MINUTES), "child did not finish");
    String log = new String(out, StandardCharsets.UTF_8);
    System.out.print(log);
    assertEquals(0, p.exitValue(), () -> Randoms.describe(seed) + "\n" + log);
    assertTrue(log.contains("full check passed"), log);
  }
}
