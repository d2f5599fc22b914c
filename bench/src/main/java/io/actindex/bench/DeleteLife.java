package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.index.mih.SearchPlanOptions;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexInfo;
import io.actindex.index.store.IndexWriter;
import io.actindex.index.store.Manifest;
import io.actindex.index.store.MergePolicy;
import io.actindex.index.store.StoreIo;
import java.io.IOException;
import java.nio.file.Path;
import java.util.BitSet;
import java.util.HashSet;
import java.util.Locale;
import java.util.Map;
import java.util.Set;
import java.util.SplittableRandom;

/**
 * A busy index's life through {@link IndexWriter}: {@code n} random codes built as one add, then
 * {@code rounds} rounds of deleting 1% of the live codes at random and adding 1% new, under the
 * default merge policy with deleted share {@code share} (1: windows by live codes only, the policy
 * before the deleted-share rule, which also merged after adds only; after deletes its windows rarely
 * change). Counts the codes every commit's new segments hold (each manifest read as it is renamed
 * into place, so merges within one call are counted too), and prints codes written per code live at
 * the end, the largest deleted share of a segment after any call, and the final segments. Write
 * counts do not depend on the codes: 64-bit random ones with one table and no partition keep it
 * quick.
 *
 * <p>Run: {@code java -cp bench/target/benchmarks.jar io.actindex.bench.DeleteLife DIR [n=1000000]
 * [rounds=100] [share=0.25]}.
 */
public final class DeleteLife {
  private DeleteLife() {}

  public static void main(String[] args) throws IOException {
    Path dir = Path.of(args[0]);
    int n = Integer.parseInt(WorstCaseSweep.arg(args, "n", "1000000")), rounds = Integer.parseInt(WorstCaseSweep.arg(args, "rounds", "100"));
    double share = Double.parseDouble(WorstCaseSweep.arg(args, "share", Double.toString(MergePolicy.DEFAULT_MAX_DELETED_SHARE)));
    RealUseBench.delete(dir);
    CodeLayout layout = CodeLayout.parse("a:64");
    Set<Integer> seen = new HashSet<>();
    long[] written = {0};
    StoreIo counting = new StoreIo.Forwarding(StoreIo.REAL) {
      @Override
      public void move(Path from, Path to) throws IOException {
        super.move(from, to);
        String name = to.getFileName().toString();
        if (name.startsWith("manifest-"))
          for (Manifest.SegmentEntry e : Manifest.read(dir, Long.parseLong(name.substring(9))).segments())
            if (seen.add(e.segmentId())) written[0] += e.count();
      }
    };
    SplittableRandom rnd = new SplittableRandom(0x11FEL);
    BitSet deleted = new BitSet();
    double maxShare = 0;
    long t0 = System.nanoTime();
    try (IndexWriter w = IndexWriter.create(dir, layout, Map.of(), counting)) {
      w.mergePolicy(new MergePolicy(MergePolicy.DEFAULT_MAX_SEGMENT_BYTES, MergePolicy.DEFAULT_MERGE_FACTOR,
          MergePolicy.DEFAULT_FLOOR_CODES, share)).searchPlan(SearchPlanOptions.defaults().withPartition(false).withSubstrings(1));
      w.add(codes(layout, n, rnd), null);
      for (int round = 0; round < rounds; round++) {
        int live = w.maxId() - deleted.cardinality(), count = live / 100;
        int[] ids = new int[count];
        for (int c = 0; c < count; ) {
          int id = rnd.nextInt(w.maxId());
          if (!deleted.get(id)) {
            deleted.set(id);
            ids[c++] = id;
          }
        }
        w.delete(ids);
        maxShare = Math.max(maxShare, maxShare(dir));
        w.add(codes(layout, n / 100, rnd), null);
        maxShare = Math.max(maxShare, maxShare(dir));
      }
    }
    try (IndexReader r = IndexReader.open(dir)) {
      System.out.printf(Locale.ROOT, "share %.3f: %d codes built, %d rounds of 1%% deleted + %d added: codes written per live code %.2f, "
          + "max deleted share %.3f, %d segments (stored/live: %s), %.0f s%n", share, n, rounds, n / 100,
          (double) written[0] / r.liveCount(), maxShare, r.info().segments().size(),
          r.info().segments().stream().map(s -> s.count() + "/" + (s.count() - s.deleted())).toList(), (System.nanoTime() - t0) / 1e9);
    }
    RealUseBench.delete(dir);
  }

  private static double maxShare(Path dir) {
    try (IndexReader r = IndexReader.open(dir)) {
      double m = 0;
      for (IndexInfo.SegmentInfo s : r.info().segments()) m = Math.max(m, (double) s.deleted() / s.count());
      return m;
    }
  }

  private static CodeBlock codes(CodeLayout layout, int n, SplittableRandom rnd) {
    long[] words = new long[n];
    for (int i = 0; i < n; i++) words[i] = rnd.nextLong();
    return new CodeBlock(layout, n, words);
  }
}
