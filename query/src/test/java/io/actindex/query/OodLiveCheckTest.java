package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.Randoms;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import io.actindex.query.OodCalibration.LiveCheck;
import io.actindex.query.OodCalibration.Standing;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Library callers learn from what every operation on the stored OOD calibration returns whether the
 * index's live examples changed since {@code ood calibrate}: a delete through {@link IndexWriter}
 * shows in {@code OodScore.run}, {@code decide}, {@code OodEval.run}, {@code EdgeExport.run} and
 * {@code Report.run}; a compaction, which keeps the live set, does not.
 */
class OodLiveCheckTest {
  @TempDir Path tmp;

  /** The live-set checks of every library entry point that uses the stored calibration, in the order named above. */
  private List<LiveCheck> everyUse(Path dir, Path q, Path q2, String tag) {
    List<LiveCheck> checks = new ArrayList<>();
    try (IndexReader r = IndexReader.open(dir)) {
      checks.add(OodScore.run(r, Source.codes(q), RowRange.ALL, new OodScore.Params(2), Progress.NONE).liveCheck());
      checks.add(OodScore.decide(r, QuerySource.load(r, Source.codes(q), RowRange.ALL)).liveCheck());
      checks.add(OodEval.run(r, new OodEval.Params(Source.codes(q), Source.codes(q2), null, null, null), Progress.NONE).liveCheck());
      checks.add(EdgeExport.run(r, new EdgeExport.Params(tmp.resolve(tag + ".edge"), false, null)).liveCheck());
      checks.add(Report.run(r, new Report.Params(tmp.resolve(tag + ".html"), null), Progress.NONE).liveCheck());
    } catch (java.io.IOException e) {
      throw new java.io.UncheckedIOException(e);
    }
    return checks;
  }

  private static int liveCount(Path dir) {
    try (IndexReader r = IndexReader.open(dir)) {
      return r.liveCount();
    }
  }

  @Test
  void aCompactionLeavesEveryResultSilentAndADeleteShowsInEach() throws Exception {
    long seed = Randoms.seed(0);
    String what = Randoms.describe(seed);
    OodIndexTest.Data d = OodIndexTest.uniform(seed, 300);
    Path dir = OodIndexTest.index(tmp.resolve("idx"), d.train()); // two segments, every 11th id deleted
    Path q = OodIndexTest.npy(tmp.resolve("q.npy"), d.queries().slice(0, 50)), q2 = OodIndexTest.npy(tmp.resolve("q2.npy"), d.queries().slice(50, 100));
    OodCalibrate.run(dir, Source.codes(OodIndexTest.npy(tmp.resolve("cal.npy"), d.cal())), RowRange.ALL,
        new OodCalibrate.Params(3, Statistic.KTH, 0.9, List.of(), false), Progress.NONE);
    int calibrated = liveCount(dir);
    assertThat(calibrated).as(what).isEqualTo(300 - 28); // ids 0, 11, ..., 297 deleted by the fixture
    for (LiveCheck c : everyUse(dir, q, q2, "calibrated")) {
      assertThat(c.standing()).as(what).isEqualTo(Standing.SAME);
      assertThat(c.message()).as(what).isNull();
      assertThat(c.then()).as(what).isEqualTo(c.now());
      assertThat(c.now().count()).as(what).isEqualTo(calibrated);
    }

    // compaction alone: segments merged and the deleted codes dropped, the same live ids
    Compact.Result compacted = Compact.run(new Compact.Params(dir, 1));
    assertThat(compacted.segmentsBefore()).as(what).isEqualTo(2);
    assertThat(compacted.segmentsAfter()).as(what).isEqualTo(1);
    assertThat(compacted.storedAfter()).as(what).isEqualTo(compacted.storedBefore() - 28);
    for (LiveCheck c : everyUse(dir, q, q2, "compacted")) {
      assertThat(c.standing()).as(what).isEqualTo(Standing.SAME);
      assertThat(c.message()).as(what).isNull();
      assertThat(c.now().count()).as(what).isEqualTo(calibrated);
    }

    try (IndexWriter w = IndexWriter.open(dir)) {
      assertThat(w.delete(1, 2, 150)).as(what).isEqualTo(3); // live ids: none is a multiple of 11
    }
    for (LiveCheck c : everyUse(dir, q, q2, "deleted")) {
      assertThat(c.standing()).as(what).isEqualTo(Standing.CHANGED);
      assertThat(c.then().count()).as(what).isEqualTo(calibrated);
      assertThat(c.now().count()).as(what).isEqualTo(calibrated - 3);
      assertThat(c.message()).as(what).isEqualTo("the index " + dir + " changed since 'ood calibrate' (" + calibrated + " live examples then, "
          + (calibrated - 3) + " now): the stored threshold may no longer flag about 10% of in-distribution inputs; it is used as it is;"
          + " run 'actindex ood calibrate' again to fit it to the index now");
    }
  }
}
