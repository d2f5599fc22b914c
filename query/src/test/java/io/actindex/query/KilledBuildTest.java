package io.actindex.query;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BadInputException;
import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Hits;
import io.actindex.core.Randoms;
import io.actindex.index.store.IndexCheck;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.security.MessageDigest;
import java.util.HexFormat;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.TreeMap;
import java.util.concurrent.TimeUnit;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A build stopped as by kill -9 right after each of its file operations in turn ({@link
 * KilledBuildChild}): the folder is then either refused by readers, writers and the check (no
 * index yet, or an unfinished build, with the folder left byte for byte as it was) or a complete
 * index whose answers equal a brute force over every row. An unfinished build used to open as an
 * index whose examples were all deleted, and an add into it hid the loss of the whole build.
 */
class KilledBuildTest {
  @TempDir Path tmp;

  @Test
  void aBuildKilledAfterAnyFileOperationIsRefusedOrComplete() throws Exception {
    long seed = Randoms.seed(0);
    String why = Randoms.describe(seed);
    SplittableRandom rnd = new SplittableRandom(seed);
    int n = 3_000, bits = 70;
    boolean[][] rows = new boolean[n][bits];
    byte[] flat = new byte[n * bits];
    for (int i = 0; i < n; i++) {
      if (i > 0 && rnd.nextInt(8) == 0) rows[i] = rows[rnd.nextInt(i)].clone(); // copies: ties
      else for (int b = 0; b < bits; b++) rows[i][b] = rnd.nextInt(b % 3 == 0 ? 6 : 2) == 0;
      for (int b = 0; b < bits; b++) flat[i * bits + b] = (byte) (rows[i][b] ? 1 : 0);
    }
    Path codesFile = TestFiles.npyUint8(tmp.resolve("codes.npy"), n, bits, flat);
    CodeBlock codes = CodeBlock.fromBits(CodeLayout.parse("code:" + bits), rows);

    String[] lines = child(tmp.resolve("whole"), codesFile, 0, why).strip().split("\n"); // Lucene may log on stderr first
    int ops = Integer.parseInt(lines[lines.length - 1].strip());
    int unfinished = 0, complete = 0, noIndex = 0, lockOnly = 0;
    for (int k = 1; k <= ops; k++) {
      Path dir = tmp.resolve("killed-" + k);
      String at = why + " halted after file operation " + k + " of " + ops;
      child(dir, codesFile, k, at);
      if (!hasManifest(dir)) {
        BadInputException e = assertThrows(BadInputException.class, () -> IndexReader.open(dir).close(), at);
        assertTrue(e.getMessage().contains("no index in") || e.getMessage().contains("does not exist"), at + ": " + e.getMessage());
        if (Files.exists(dir.resolve("writer.lock"))) {
          // the build's lock file without a manifest: readers, writers and the check say what to do
          for (Exception x : List.of(e, assertThrows(BadInputException.class, () -> IndexWriter.open(dir).close(), at),
              assertThrows(BadInputException.class, () -> IndexCheck.run(dir), at)))
            assertTrue(x.getMessage().contains("no manifest-N file beside writer.lock") && x.getMessage().endsWith("remove the folder and build again"),
                at + ": " + x.getMessage());
          lockOnly++;
        }
        noIndex++;
        continue;
      }
      Map<String, String> before = digests(dir);
      IndexReader r;
      try {
        r = IndexReader.open(dir);
      } catch (BadInputException e) {
        assertTrue(e.getMessage().contains("an unfinished build"), at + ": " + e.getMessage());
        assertTrue(e.getMessage().contains("of the " + n + " examples"), at + ": " + e.getMessage());
        BadInputException w = assertThrows(BadInputException.class, () -> IndexWriter.open(dir).close(), at);
        assertTrue(w.getMessage().contains("an unfinished build"), at + ": " + w.getMessage());
        IndexCheck.Report report = IndexCheck.run(dir);
        assertTrue(!report.ok() && report.files().getFirst().problem().contains("an unfinished build"), at + ": " + report);
        assertEquals(before, digests(dir), at + ": a refusal changed the folder");
        unfinished++;
        continue;
      }
      try (r) {
        assertEquals(n, r.liveCount(), at);
        for (int q = 0; q < 6; q++) {
          long[] query = codes.code(rnd.nextInt(n));
          if (q % 2 == 1) query[0] ^= 1L << rnd.nextInt(64) | 1L << rnd.nextInt(64);
          int kk = 1 + rnd.nextInt(40);
          Hits want = BruteForce.knn(codes, query, kk, id -> true, null);
          assertEquals(want, r.search(query, kk, null, null), at + " query " + q + " k " + kk);
        }
      }
      complete++;
    }
    // the state that matters was met: the empty first generation published before the rows' commit
    assertTrue(unfinished > 0 && complete > 0 && lockOnly > 0,
        why + ": unfinished " + unfinished + ", complete " + complete + ", no index " + noIndex + " (lock file only " + lockOnly + ")");
  }

  /** Runs {@link KilledBuildChild}; returns its standard output. */
  private static String child(Path dir, Path codes, int haltAt, String why) throws IOException, InterruptedException {
    String java = Path.of(System.getProperty("java.home"), "bin", "java").toString();
    Process p = new ProcessBuilder(java, "-Xmx256m", "-XX:TieredStopAtLevel=1", "--enable-native-access=ALL-UNNAMED",
        "-cp", System.getProperty("java.class.path"), KilledBuildChild.class.getName(), dir.toString(), codes.toString(),
        Integer.toString(haltAt)).redirectErrorStream(true).start();
    String out = new String(p.getInputStream().readAllBytes(), StandardCharsets.UTF_8);
    assertTrue(p.waitFor(120, TimeUnit.SECONDS), why + ": child did not finish");
    assertEquals(haltAt > 0 ? 9 : 0, p.exitValue(), why + ": child exit; output: " + out);
    return out;
  }

  private static boolean hasManifest(Path dir) throws IOException {
    if (!Files.isDirectory(dir)) return false;
    try (Stream<Path> s = Files.list(dir)) {
      return s.anyMatch(f -> f.getFileName().toString().matches("manifest-[1-9][0-9]*"));
    }
  }

  private static Map<String, String> digests(Path dir) throws Exception {
    Map<String, String> out = new TreeMap<>();
    try (Stream<Path> s = Files.walk(dir)) {
      for (Path f : s.filter(Files::isRegularFile).toList())
        out.put(dir.relativize(f).toString(), HexFormat.of().formatHex(MessageDigest.getInstance("SHA-256").digest(Files.readAllBytes(f))));
    }
    return out;
  }
}
