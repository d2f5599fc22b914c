package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.fail;

import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.io.IOException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.roaringbitmap.RoaringBitmap;

/**
 * Power loss at every step of a run of changes (adds with and without metadata, automatic merges,
 * a delete, a compaction, a delete followed by its rewrite of a segment past the deleted share): the machine stops at operation K of the {@link PowerLossIo} layer, the
 * folder is rewound to what was fsynced, and the index must open at the last change that returned
 * or at the one in flight — never lose a returned change, never open damaged. Removing any fsync
 * of the commit path (a file's or the folder's) makes this test fail.
 */
class PowerLossTest {
  @TempDir Path tmp;

  /** One change and the state after it. */
  private record Step(String name, Change change) {}

  private interface Change {
    void apply(IndexWriter w);
  }

  private static final MergePolicy SMALL = new MergePolicy(2048, 2, 8);

  @Test
  @Tag("slow")
  void everyCrashPointLeavesTheLastReturnedChangeOrTheNext() throws IOException {
    run(0, Integer.MAX_VALUE);
  }

  /** The step boundaries and a seeded sample of the other crash points (the quick loop). */
  @Test
  void sampledCrashPointsLeaveTheLastReturnedChangeOrTheNext() throws IOException {
    run(1, 20);
  }

  private void run(int seedIndex, int sample) throws IOException {
    long seed = Randoms.seed(seedIndex);
    String why = Randoms.describe(seed);
    CodeBlock codes = SyntheticCodes.reluLike(80, 100, 20, seed).codes();
    List<Step> steps = List.of(
        new Step("add 0-9 with metadata", w -> w.add(codes.slice(0, 10), StoreFixtures.rows(0, 10))),
        new Step("add 10-19 bare", w -> w.add(codes.slice(10, 20), null)),
        new Step("add 20-39 bare, merges", w -> w.add(codes.slice(20, 40), null)),
        new Step("delete", w -> w.delete(1, 12, 25)),
        new Step("add 40-79 with metadata, split and merged", w -> w.add(codes.slice(40, 80), StoreFixtures.rows(40, 40))),
        new Step("compact", IndexWriter::compact),
        new Step("delete past the deleted share, rewritten", w -> w.delete(java.util.stream.IntStream.range(40, 70).toArray())));
    Path pristine = tmp.resolve("pristine");
    IndexWriter.create(pristine, codes.layout(), Map.of()).close();

    // a run without a crash gives the states after each step and the number of operations
    List<State> states = new ArrayList<>();
    states.add(State.of(pristine));
    Path full = tmp.resolve("full");
    StoreFixtures.copy(pristine, full);
    PowerLossIo counting = new PowerLossIo(full, Long.MAX_VALUE);
    List<Long> opsAfter = new ArrayList<>();
    for (Step s : steps) {
      try (IndexWriter w = IndexWriter.open(full, counting).mergePolicy(SMALL)) {
        s.change().apply(w);
      }
      opsAfter.add(counting.ops());
      states.add(State.of(full));
      if (s.name().contains("rewritten"))
        try (IndexReader r = IndexReader.open(full)) {
          assertTrue(r.info().segments().stream().allMatch(g -> g.deleted() <= SMALL.maxDeletedShare() * g.count()),
              "the delete past the share rewrote its segments: " + r.info().segments());
        }
    }
    assertTrue(states.get(3).segments() < 4, "merges happened: " + states.get(3).segments() + " segments");

    java.util.TreeSet<Long> points = new java.util.TreeSet<>();
    java.util.SplittableRandom rnd = new java.util.SplittableRandom(seed);
    if (sample >= counting.ops() + 1) for (long k = 0; k <= counting.ops(); k++) points.add(k);
    else {
      for (long end : opsAfter) for (long d = -4; d <= 1; d++) if (end + d >= 0 && end + d <= counting.ops()) points.add(end + d);
      while (points.size() < sample + 6L * opsAfter.size()) points.add(rnd.nextLong(counting.ops() + 1));
    }
    int crashes = 0;
    for (long k : points) {
      Path dir = tmp.resolve("k" + k);
      StoreFixtures.copy(pristine, dir);
      PowerLossIo io = new PowerLossIo(dir, k);
      int returned = 0;
      for (Step s : steps) {
        try (IndexWriter w = IndexWriter.open(dir, io).mergePolicy(SMALL)) {
          s.change().apply(w);
        } catch (RuntimeException e) {
          if (!io.crashed()) throw e;
          break;
        }
        if (io.crashed()) break; // died in clean-up after the commit
        returned++;
      }
      io.crash();
      crashes++;
      String where = why + " crash at operation " + k + " after " + returned + " returned steps ("
          + (returned < steps.size() ? "in '" + steps.get(returned).name() + "'" : "all done") + "); lost "
          + io.volatileNames();
      State after;
      try {
        after = State.of(dir);
      } catch (RuntimeException e) {
        throw new AssertionError("index does not open: " + e.getMessage() + ": " + where, e);
      }
      boolean atReturned = after.sameData(states.get(returned));
      boolean atNext = returned < steps.size() && after.sameData(states.get(returned + 1));
      if (!atReturned && !atNext)
        fail("index holds " + after + ", expected " + states.get(returned)
            + (returned < steps.size() ? " or " + states.get(returned + 1) : "") + ": " + where);
      DamageTest.deleteTree(dir);
    }
    assertEquals(points.size(), crashes, why);
    System.out.println("power loss test: " + crashes + " crash points, steps end at operations " + opsAfter);
  }

  /** What a reader sees: live ids, their codes and metadata rows. */
  private record State(int maxId, RoaringBitmap live, List<long[]> codes, List<Map<String, String>> rows, int segments) {
    static State of(Path dir) {
      try (IndexReader r = IndexReader.open(dir)) {
        List<long[]> codes = new ArrayList<>();
        List<Map<String, String>> rows = new ArrayList<>();
        for (int id : r.liveIds().toArray()) {
          codes.add(r.code(id));
          rows.add(r.meta().document(id));
        }
        assertEquals(r.liveCount(), r.meta().numDocs());
        return new State(r.maxId(), RoaringBitmap.bitmapOf(r.liveIds().toArray()), codes, rows, r.info().segments().size());
      }
    }

    boolean sameData(State o) {
      if (maxId != o.maxId || !live.equals(o.live) || !rows.equals(o.rows)) return false;
      for (int i = 0; i < codes.size(); i++) {
        try {
          assertArrayEquals(o.codes.get(i), codes.get(i));
        } catch (AssertionError e) {
          return false;
        }
      }
      return true;
    }

    @Override
    public String toString() {
      return "maxId " + maxId + ", " + live.getCardinality() + " live in " + segments + " segments";
    }
  }
}
