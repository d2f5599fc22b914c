package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.core.Randoms;
import io.actindex.core.ScanSearcher;
import io.actindex.core.SyntheticCodes;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import java.util.function.IntFunction;
import java.util.function.IntPredicate;
import java.util.function.IntUnaryOperator;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;

/**
 * {@link JointSearch} (an index's segments searched as one) against {@link BruteForce} over every
 * code by id: uniform, skewed ReLU-like and dense ReLU codes; 2 to 6 blocks of unequal sizes (a few
 * codes up to thousands), some without a partition and some plain scans, given in random order;
 * ids interleaved across blocks; no filter, one or 30% deleted, filters of 10% and 0.5% (walked,
 * block by block), an empty one; k from 1 past a block's size and past the total; one code copied
 * to many ids in different blocks, so that ties at the k-th distance fall across blocks (ties go to
 * the smaller id, as everywhere); masks (block by block). Speed is never asserted.
 */
class JointSearchTest {
  private static final int[] BITS = {64, 128, 256, 512};

  @Test
  void forcedPartitionsEqualBruteForce() {
    for (int rep = 0; rep < 24; rep++) {
      SplittableRandom rnd = new SplittableRandom(Randoms.seed(rep));
      check(rep, 200 + rnd.nextInt(2500), true);
    }
  }

  /** Blocks large enough for the partition the planner chooses (at least 4,096 codes). */
  @Test
  void plannerChosenPartitionsEqualBruteForce() {
    for (int rep = 50; rep < 52; rep++) check(rep, 9_000 + new SplittableRandom(Randoms.seed(rep)).nextInt(3_000), false);
  }

  @Test
  @Tag("slow")
  void plannerChosenPartitionsEqualBruteForceManySeeds() {
    for (int rep = 100; rep < 108; rep++) check(rep, 9_000 + new SplittableRandom(Randoms.seed(rep)).nextInt(8_000), false);
  }

  /**
   * One block's planner never lets its partition finish a query (a partition code priced near a
   * millisecond), so it leaves the walk: the walk then starts over instead of going on from the
   * pre-pass, which holds that block's codes too, and the block is searched on its own.
   */
  @Test
  void blockLeavingTheWalkEqualsBruteForce() {
    int left = 0;
    for (int rep = 60; rep < 64; rep++) left += check(rep, 12_000 + new SplittableRandom(Randoms.seed(rep)).nextInt(4_000), false, true);
    assertTrue(left > 0, "no block left the walk");
  }

  private void check(int rep, int n, boolean forced) {
    check(rep, n, forced, false);
  }

  private static final PlannerCosts LEAVING = new PlannerCosts(0.4, 0.3, 20, 50, 30, 3, 9e5, 30);

  /** Returns how many unmasked queries had a block leave the walk. */
  private int check(int rep, int n, boolean forced, boolean leaving) {
    int left = 0;
    long seed = Randoms.seed(rep);
    SplittableRandom rnd = new SplittableRandom(seed);
    int bits = forced ? BITS[rnd.nextInt(BITS.length)] : 256;
    String why = Randoms.describe(seed) + " family=" + rep % 3 + " n=" + n + " bits=" + bits + " forced=" + forced + " leaving=" + leaving;
    // the codes by id, with one code copied to 16 ids (ties across blocks) and 3% copies of others
    CodeBlock drawn = PartitionTest.codes(rep, n, bits, seed);
    int w = drawn.wordsPerCode();
    long[] words = drawn.words().clone();
    int tied = rnd.nextInt(n);
    for (int i = 0; i < 16; i++) System.arraycopy(words, tied * w, words, rnd.nextInt(n) * w, w);
    for (int i = 0; i < n / 33; i++) System.arraycopy(words, rnd.nextInt(n) * w, words, rnd.nextInt(n) * w, w);
    CodeBlock all = new CodeBlock(drawn.layout(), n, words);

    // blocks: unequal shares of a random permutation of the ids, each block's ids ascending
    int blocks = forced ? 2 + rnd.nextInt(5) : 2 + rnd.nextInt(2);
    int[] perm = Randoms.permutation(n, rnd);
    int[] cut = new int[blocks + 1];
    cut[blocks] = n;
    for (int b = 1; b < blocks; b++) // the first block small, the others of random sizes, each of 2 codes or more
      cut[b] = Math.min(n - 2 * (blocks - b), b == 1 ? 2 + rnd.nextInt(Math.min(40, n / blocks)) : cut[b - 1] + 2 + rnd.nextInt(2 * n / blocks));
    boolean scanFirst = rep % 4 == 3, smallClusters = rnd.nextBoolean();
    int largest = 0;
    for (int b = 1; b < blocks; b++) if (cut[b + 1] - cut[b] > cut[largest + 1] - cut[largest]) largest = b;
    int[][] ids = new int[blocks][];
    List<CodeSearcher> searchers = new ArrayList<>();
    List<IntUnaryOperator> idOf = new ArrayList<>();
    SearchPlanOptions opts = forced ? SearchPlanOptions.defaults().withStrategy(SearchPlanOptions.Strategy.PARTITION) : SearchPlanOptions.defaults();
    for (int b = 0; b < blocks; b++) {
      int[] bi = Arrays.copyOfRange(perm, cut[b], cut[b + 1]);
      Arrays.sort(bi);
      ids[b] = bi;
      long[] bw = new long[bi.length * w];
      for (int o = 0; o < bi.length; o++) System.arraycopy(words, bi[o] * w, bw, o * w, w);
      CodeBlock block = new CodeBlock(all.layout(), bi.length, bw);
      CodeSearcher built = b == 0 && scanFirst ? new ScanSearcher(block) // a small segment may be a plain scan
          : leaving && b == largest ? Searchers.build(block, opts, LEAVING) : Searchers.build(block, opts);
      // the default cluster size leaves these blocks few clusters: in half the cases each block gets
      // small ones (a few codes up to sqrt of its size), so that clusters of many sizes meet in one walk
      if (smallClusters && built instanceof MihSearcher m && m.partition != null)
        built = m.withPartition(Partition.build(block, 2, 2 + rnd.nextInt(1 + (int) Math.sqrt(bi.length))));
      searchers.add(built);
      idOf.add(o -> bi[o]);
    }
    JointSearch joint = new JointSearch(all.layout(), searchers, idOf);
    if (forced) assertEquals(scanFirst ? blocks - 1 : blocks, joint.partitionedBlocks(), why + ": blocks searched jointly");
    else assertTrue(joint.partitionedBlocks() >= 1, why + ": no block with a partition");

    for (int f = 0; f < 7; f++) {
      IdSet accept = accept(f, n, rnd);
      IntFunction<IntPredicate> blockAccept = b -> accept == null ? null : ordinals(accept, ids[b]);
      for (int qi = 0; qi < 6; qi++) {
        long[] q = qi == 0 ? all.code(tied)
            : qi < 4 ? flip(all.code(rnd.nextInt(n)), qi - 1, bits, rnd)
            : SyntheticCodes.uniform(1, bits, rnd.nextLong()).code(0);
        long[] mask = qi == 5 && all.layout().segments().size() > 1 ? all.layout().mask(1) : null;
        int smallest = Arrays.stream(ids).mapToInt(a -> a.length).min().orElse(0);
        for (int k : new int[] {1, 5, 10, 100, smallest + 3, n + 5}) {
          String what = why + " smallClusters=" + smallClusters + " blocks=" + Arrays.toString(cut) + " filter=" + f + " query=" + qi + " k=" + k;
          Hits expected = BruteForce.knn(all, q, k, accept, mask);
          assertEquals(expected, joint.knn(q, k, accept, blockAccept, mask), what);
          if (mask == null && joint.walkedLast() < joint.partitionedBlocks()) left++;
        }
      }
    }
    return left;
  }

  /** Filter case f: none, one deleted, 30% deleted, 10% kept, 0.5% kept (walked), none kept, 90% kept. */
  private static IdSet accept(int f, int n, SplittableRandom rnd) {
    if (f == 0) return null;
    if (f == 1) return IdSet.all(n).andNot(IdSet.of(n, rnd.nextInt(n)));
    double keep = new double[] {0, 0, 0.7, 0.1, 0.005, 0, 0.9}[f];
    long[] words = new long[(n + 63) >>> 6];
    for (int id = 0; id < n; id++) if (rnd.nextDouble() < keep) words[id >>> 6] |= 1L << (id & 63);
    return IdSet.of(words, n);
  }

  /** The members of {@code accept} among a block's ids, as the block's ordinals. */
  private static IdSet ordinals(IdSet accept, int[] ids) {
    int[] ords = new int[ids.length];
    int m = 0;
    for (int o = 0; o < ids.length; o++) if (accept.contains(ids[o])) ords[m++] = o;
    return IdSet.of(ids.length, Arrays.copyOf(ords, m));
  }

  private static long[] flip(long[] code, int flips, int bits, SplittableRandom rnd) {
    for (int i = 0; i < flips; i++) {
      int b = rnd.nextInt(bits);
      code[b >>> 6] ^= 1L << (b & 63);
    }
    return code;
  }
}
