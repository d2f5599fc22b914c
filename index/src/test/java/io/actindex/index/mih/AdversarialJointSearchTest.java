package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.AdversarialCodes;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hits;
import io.actindex.core.IdSet;
import io.actindex.core.PopcountReference;
import io.actindex.core.Randoms;
import io.actindex.core.ScanSearcher;
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
 * {@link JointSearch} over blocks chosen to break it, against {@link PopcountReference} over every
 * code by id (an independent {@code Long.bitCount} loop; Hamming 1950): widths around word
 * boundaries, layouts of several layers; blocks of 0, 1 and 2 codes next to large ones, ids
 * interleaved or contiguous; each block's searcher drawn from every strategy and cost profile (a
 * forced partition, the planner with small clusters, tables, a plain scan, planner costs that
 * favour one path), so blocks with and without a partition meet in one walk; identical codes and a
 * few distinct codes copied across blocks (the k-th distance tied across blocks); filters empty, of
 * one member, of all, of one block's members only, sparse and half, with tombstones on top; masks of
 * every kind; k at the limits.
 */
class AdversarialJointSearchTest {

  @Test
  void jointSearchEqualsReferenceOnTheEdges() {
    int rep = 0;
    for (int bits : AdversarialCodes.WIDTHS)
      for (String family : AdversarialCodes.FAMILIES) check(rep++, bits, family, 400, 4);
  }

  /** One block of tens of thousands of codes next to blocks of 1, 2 and a few hundred. */
  @Test
  @Tag("slow")
  void veryUnequalBlocksEqualReference() {
    int rep = 2000;
    for (int bits : new int[] {129, 300})
      for (String family : new String[] {"uniform", "fewDistinct", "halfConstant", "oneCluster"}) check(rep++, bits, family, 30_000, 3);
  }

  private static void check(int rep, int bits, String family, int large, int queries) {
    long seed = Randoms.seed(rep);
    SplittableRandom rnd = new SplittableRandom(seed);
    CodeLayout layout = AdversarialCodes.layout(bits, rnd);
    // block sizes: tiny ones next to one large one, in random order
    int[] sizes = {0, 1, 2, 1 + rnd.nextInt(large / 4), large / 2 + rnd.nextInt(large / 2)};
    int[] order = Randoms.permutation(sizes.length, rnd);
    int blocks = 2 + rnd.nextInt(sizes.length - 1);
    int[] blockSize = new int[blocks];
    int n = 0;
    for (int b = 0; b < blocks; b++) n += blockSize[b] = sizes[order[b]];
    CodeBlock all = AdversarialCodes.codes(family, layout, n, rnd);
    int w = all.wordsPerCode();
    boolean interleaved = rnd.nextBoolean();
    int[] perm = interleaved ? Randoms.permutation(n, rnd) : java.util.stream.IntStream.range(0, n).toArray();
    int[][] ids = new int[blocks][];
    List<CodeSearcher> searchers = new ArrayList<>();
    List<String> kinds = new ArrayList<>();
    List<IntUnaryOperator> idOf = new ArrayList<>();
    for (int b = 0, at = 0; b < blocks; at += blockSize[b], b++) {
      int[] bi = Arrays.copyOfRange(perm, at, at + blockSize[b]);
      Arrays.sort(bi);
      ids[b] = bi;
      long[] bw = new long[bi.length * w];
      for (int o = 0; o < bi.length; o++) System.arraycopy(all.words(), bi[o] * w, bw, o * w, w);
      CodeBlock block = new CodeBlock(layout, bi.length, bw);
      List<java.util.Map.Entry<String, CodeSearcher>> choices = new ArrayList<>(AdversarialSearchTest.searchers(block, rnd).entrySet());
      choices.add(java.util.Map.entry("plainScanSearcher", new ScanSearcher(block)));
      java.util.Map.Entry<String, CodeSearcher> pick = choices.get(rnd.nextInt(choices.size()));
      kinds.add(pick.getKey() + "(" + bi.length + ")");
      searchers.add(pick.getValue());
      idOf.add(o -> bi[o]);
    }
    JointSearch joint = new JointSearch(layout, searchers, idOf);
    String why = Randoms.describe(seed) + " bits=" + bits + " layout=" + layout + " family=" + family + " n=" + n + " blocks=" + kinds
        + " interleaved=" + interleaved + " jointly=" + joint.partitionedBlocks();
    String[] filters = {"none", "empty", "one", "all", "sparse", "half", "oneBlock", "deletedHalf"};
    for (int qi = 0; qi < queries; qi++) {
      long[] q = AdversarialCodes.query(all, rnd);
      for (String maskKind : new String[] {"none", "none", AdversarialCodes.MASKS[rnd.nextInt(AdversarialCodes.MASKS.length)]}) {
        long[] mask = AdversarialCodes.mask(maskKind, layout, rnd);
        for (String filterKind : filters) {
          IdSet accept = filter(filterKind, n, ids, rnd);
          IntFunction<IntPredicate> blockAccept = b -> accept == null ? null : ordinals(accept, ids[b]);
          for (int k : AdversarialCodes.ks(n, rnd)) {
            Hits expected = PopcountReference.knn(all, q, k, accept, mask);
            assertEquals(expected, joint.knn(q, k, accept, blockAccept, mask),
                why + " query=" + qi + " mask=" + maskKind + " filter=" + filterKind + " k=" + k);
          }
        }
      }
    }
  }

  /** A filter over ids: the kinds of {@link AdversarialCodes#filter}, one block's ids only, or half the ids deleted and a third of the rest kept. */
  private static IdSet filter(String kind, int n, int[][] ids, SplittableRandom rnd) {
    switch (kind) {
      case "oneBlock" -> {
        int[] members = ids[rnd.nextInt(ids.length)];
        return IdSet.of(n, members);
      }
      case "deletedHalf" -> {
        IdSet live = (IdSet) AdversarialCodes.filter("half", n, rnd);
        IdSet kept = IdSet.of(n, java.util.stream.IntStream.range(0, n).filter(i -> rnd.nextInt(3) == 0).toArray());
        return kept.and(live);
      }
      default -> {
        return kind.equals("none") ? null : (IdSet) AdversarialCodes.filter(kind, n, rnd);
      }
    }
  }

  /** The members of {@code accept} among a block's ids, as the block's ordinals. */
  private static IdSet ordinals(IdSet accept, int[] ids) {
    int[] ords = new int[ids.length];
    int m = 0;
    for (int o = 0; o < ids.length; o++) if (accept.contains(ids[o])) ords[m++] = o;
    return IdSet.of(ids.length, Arrays.copyOf(ords, m));
  }
}
