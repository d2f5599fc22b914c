package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.fail;

import io.actindex.core.BadInputException;
import io.actindex.core.Randoms;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * Kills a child JVM ({@link CrashChild}) at random moments while it adds (splitting at a small
 * segment cap and merging automatically with a merge factor of 2), deletes and compacts,
 * then checks that the index opens at the last committed state (or the one being committed when
 * the kill came), with every committed code and metadata document present, and that the dead
 * writer's lock does not block the next writer. The runs chain on one folder.
 */
class CrashTest {
  private static final int RUNS = 20;
  @TempDir Path tmp;

  @Test
  @Tag("slow")
  void killedWriterLeavesLastCommitIntact() throws Exception {
    long seed = Randoms.seed(0);
    String why = Randoms.describe(seed);
    SplittableRandom rnd = new SplittableRandom(seed);
    Path dir = tmp.resolve("idx");
    IndexWriter.create(dir, CrashChild.LAYOUT, Map.of()).close();
    int maxId = 0;
    RoaringBitmap deleted = new RoaringBitmap();
    int interrupted = 0;
    for (int run = 0; run < RUNS; run++) {
      String java = Path.of(System.getProperty("java.home"), "bin", "java").toString();
      // merges of 2 and a small segment cap: adds split and merge automatically, so kills land in merges too
      Path log = tmp.resolve("child-" + run + ".log");
      Process p = new ProcessBuilder(java, "-Xmx256m", "-XX:TieredStopAtLevel=1",
          "-D" + MergePolicy.FACTOR_PROPERTY + "=2", "-D" + MergePolicy.MAX_BYTES_PROPERTY + "=4096",
          "-cp", System.getProperty("java.class.path"),
          CrashChild.class.getName(), dir.toString(), Long.toString(rnd.nextLong()), log.toString())
          .redirectOutput(ProcessBuilder.Redirect.DISCARD).redirectError(ProcessBuilder.Redirect.DISCARD).start();
      // wait for the child's first change, then kill it after a random delay
      long deadline = System.nanoTime() + TimeUnit.SECONDS.toNanos(60);
      while (!(Files.exists(log) && Files.size(log) > 0) && p.isAlive() && System.nanoTime() < deadline) Thread.sleep(5);
      if (run == 0 && p.isAlive()) {
        // the child holds the lock: a writer in this process is refused
        BadInputException e = assertThrows(BadInputException.class, () -> IndexWriter.open(dir), why);
        assertTrue(e.getMessage().contains("locked by another writer (another process"), e.getMessage());
      }
      // on a busy machine every random delay can fall inside the first change: from half-way on, a
      // run waits for one change to complete before its delay, so the chain does move on
      while (maxId == 0 && run >= RUNS / 2 && !Files.readAllLines(log).contains("DONE") && p.isAlive() && System.nanoTime() < deadline)
        Thread.sleep(5);
      Thread.sleep(rnd.nextInt(2000));
      p.destroyForcibly();
      assertTrue(p.waitFor(30, TimeUnit.SECONDS), "child did not die");
      List<String> lines = Files.exists(log) ? Files.readAllLines(log) : List.of();
      String where = why + " run " + run + " lines " + tail(lines);
      if (lines.isEmpty()) fail("child made no change before the kill: " + where);

      // replay: the state after the last DONE, and the state the pending change would make
      int doneMax = maxId;
      RoaringBitmap doneDel = deleted.clone();
      int nextMax = maxId;
      RoaringBitmap nextDel = deleted.clone();
      boolean pending = false;
      for (String l : lines) {
        if (l.equals("DONE")) {
          doneMax = nextMax;
          doneDel = nextDel.clone();
          pending = false;
        } else if (l.startsWith("BEGIN add ")) {
          nextMax = doneMax + Integer.parseInt(l.substring(10));
          nextDel = doneDel.clone();
          pending = true;
        } else if (l.startsWith("BEGIN delete ")) {
          nextMax = doneMax;
          nextDel = doneDel.clone();
          for (String id : l.substring(13).split(",")) nextDel.add(Integer.parseInt(id));
          pending = true;
        } else if (l.equals("BEGIN compact")) {
          nextMax = doneMax;
          nextDel = doneDel.clone();
          pending = true;
        } else {
          fail("unexpected child output '" + l + "': " + where);
        }
      }
      if (pending) interrupted++;
      try (IndexReader r = IndexReader.open(dir)) {
        boolean atDone = r.maxId() == doneMax && deletedOf(r).equals(doneDel);
        boolean atNext = pending && r.maxId() == nextMax && deletedOf(r).equals(nextDel);
        assertTrue(atDone || atNext, "index at maxId " + r.maxId() + " deleted " + deletedOf(r).getCardinality()
            + ", expected maxId " + doneMax + " deleted " + doneDel.getCardinality() + (pending ? " or maxId "
            + nextMax + " deleted " + nextDel.getCardinality() : "") + ": " + where + "; the run started at maxId " + maxId + " deleted "
            + deleted.getCardinality() + ", generation now " + Manifest.newestGeneration(dir) + ", its child said " + lines);
        maxId = r.maxId();
        deleted = deletedOf(r);
        RoaringBitmap live = RoaringBitmap.bitmapOf(r.liveIds().toArray());
        assertEquals(live.getCardinality(), r.meta().numDocs(), where);
        assertTrue(live.isEmpty() || r.hasMagnitudes(), "every segment keeps magnitudes: " + where);
        float[] mags = new float[CrashChild.LAYOUT.bits()];
        for (int id : live) {
          assertArrayEquals(CrashChild.code(id), r.code(id), "code of id " + id + ": " + where);
          r.magnitudes(id, mags, 0);
          // 8 bits over a range of at most 0..9; compactions that widen a range requantise once each
          for (int j = 0; j < mags.length; j++)
            assertEquals(CrashChild.value(id, j), mags[j], 0.1, "magnitude " + j + " of id " + id + ": " + where);
          Map<String, String> doc = r.meta().document(id);
          assertEquals(CrashChild.row(id), doc, "metadata of id " + id + ": " + where);
        }
        assertArrayEquals(live.toArray(), io.actindex.index.meta.MetaQueries.select(r.meta(), new org.apache.lucene.search.MatchAllDocsQuery()).toArray(), where);
      }
      IndexWriter.open(dir).close(); // the dead writer's lock file does not block
    }
    assertTrue(maxId > 0, why);
    System.out.println("crash test: " + interrupted + " of " + RUNS + " kills interrupted a change; final maxId " + maxId
        + ", deleted " + deleted.getCardinality());
  }

  private static RoaringBitmap deletedOf(IndexReader r) {
    RoaringBitmap all = new RoaringBitmap();
    if (r.maxId() > 0) all.add(0L, r.maxId());
    all.andNot(RoaringBitmap.bitmapOf(r.liveIds().toArray()));
    return all;
  }

  private static String tail(List<String> lines) {
    return lines.subList(Math.max(0, lines.size() - 4), lines.size()).toString();
  }
}
