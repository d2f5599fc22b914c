package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.AdversarialCodes;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hits;
import io.actindex.core.PopcountReference;
import io.actindex.core.Randoms;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.function.IntPredicate;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;

/**
 * Every path of one block's searcher ({@link Searchers#build}: the planner, the tables, the
 * cascade, the partition with small clusters, the scan, the masked scan's head, the walk of a
 * selective filter and {@code MihSearcher.selective}) on inputs chosen to break them, against
 * {@link PopcountReference} (an independent {@code Long.bitCount} loop over all codes; Hamming,
 * Bell System Technical Journal, 1950): widths around word boundaries (1 to 1,024 bits), layouts of
 * 1-4 layers, code sets where the planner's estimates are wrong (identical codes, a few distinct
 * codes copied many times, half the bits constant, one tight cluster, sparse codes); empty,
 * one-bit, one-layer and whole-layout masks; bits set past the width in queries and masks; filters
 * empty, of one member, of all, sparse, half and a plain predicate; k of -3, 0, 1, n-1, n, n+1 and
 * Integer.MAX_VALUE; distance caps; radius -1, 0 and the full width. Forced strategies and planner
 * costs skewed to send queries down each path in turn; payloads written and read back answer the
 * same.
 */
class AdversarialSearchTest {

  /** Planner costs that each favour one path (scan per code, per word, dense probe, sparse probe, candidate, walk, partition code, far candidate). */
  static final Map<String, PlannerCosts> COSTS = new LinkedHashMap<>();

  static {
    COSTS.put("tablesCheap", new PlannerCosts(50, 50, 0.001, 0.001, 0.001, 1e5, 1e5, 0.001));
    COSTS.put("partitionCheap", new PlannerCosts(50, 50, 1e5, 1e5, 1e5, 1e5, 0.0001, 1e5));
    COSTS.put("walkCheap", new PlannerCosts(50, 50, 1, 1, 1, 0.0001, 0.0001, 1));
    COSTS.put("walkOnly", new PlannerCosts(50, 50, 1e5, 1e5, 1e5, 0.0001, 1e5, 1e5));
    COSTS.put("scanCheap", new PlannerCosts(0.0001, 0.0001, 1e5, 1e5, 1e5, 1e5, 1e5, 1e5));
    COSTS.put("defaults", PlannerCosts.defaults());
  }

  /** The searchers of one block: every strategy, table layout and cost profile. */
  static Map<String, CodeSearcher> searchers(CodeBlock codes, SplittableRandom rnd) {
    Map<String, CodeSearcher> s = new LinkedHashMap<>();
    SearchPlanOptions d = SearchPlanOptions.defaults();
    int n = codes.size(), cluster = 1 + rnd.nextInt(1 + (int) Math.sqrt(Math.max(1, n)));
    s.put("auto", Searchers.build(codes, d));
    s.put("tables", Searchers.build(codes, d.withStrategy(SearchPlanOptions.Strategy.TABLES)));
    s.put("scan", Searchers.build(codes, d.withStrategy(SearchPlanOptions.Strategy.SCAN)));
    s.put("oneTable", Searchers.build(codes, d.withSubstrings(1).withStrategy(SearchPlanOptions.Strategy.TABLES)));
    s.put("cascade", Searchers.build(codes, d.withMaxSubstrings(1 + rnd.nextInt(2)).withStrategy(SearchPlanOptions.Strategy.TABLES)));
    s.put("plainTables", Searchers.build(codes, d.plain().withStrategy(SearchPlanOptions.Strategy.TABLES)));
    s.put("partition", small(Searchers.build(codes, d.withStrategy(SearchPlanOptions.Strategy.PARTITION)), codes, cluster));
    for (Map.Entry<String, PlannerCosts> c : COSTS.entrySet())
      s.put("auto/" + c.getKey(), small(Searchers.build(codes, d, c.getValue()), codes, cluster));
    return s;
  }

  /** The searcher with a partition of small clusters (or as it is, without a partition or codes for one). */
  private static CodeSearcher small(CodeSearcher s, CodeBlock codes, int clusterSize) {
    if (!(s instanceof MihSearcher m) || codes.size() < 2) return s;
    Partition p = Partition.build(codes, 2, clusterSize);
    return p == null ? s : m.withPartition(p);
  }

  @Test
  void everyPathEqualsReferenceOnTheEdges() {
    int rep = 0;
    for (int bits : AdversarialCodes.WIDTHS)
      for (String family : AdversarialCodes.FAMILIES) check(rep++, bits, family, new int[] {0, 1, 2, -1}, 300);
  }

  /** Codes wider than the partition's radii can hold (65,535 bits): no partition, long tables and masks. */
  @Test
  void widthBeyondThePartitionsRadii() {
    int rep = 500;
    for (String family : new String[] {"uniform", "fewDistinct", "sparse"}) check(rep++, 65_600, family, new int[] {2, -1}, 40);
  }

  /** Blocks of a few thousand codes: more clusters, wider tables, longer heads. */
  @Test
  @Tag("slow")
  void everyPathEqualsReferenceOnLargerBlocks() {
    int rep = 1000;
    for (int bits : new int[] {65, 257, 1000})
      for (String family : new String[] {"uniform", "fewDistinct", "halfConstant", "oneCluster"}) check(rep++, bits, family, new int[] {-1}, 6000);
  }

  private static void check(int rep, int bits, String family, int[] sizes, int randomSize) {
    long seed = Randoms.seed(rep);
    SplittableRandom rnd = new SplittableRandom(seed);
    CodeLayout layout = AdversarialCodes.layout(bits, rnd);
    for (int size : sizes) {
      int n = size >= 0 ? size : 1 + randomSize / 2 + rnd.nextInt(randomSize / 2);
      CodeBlock codes = AdversarialCodes.codes(family, layout, n, rnd);
      Map<String, CodeSearcher> searchers = searchers(codes, rnd);
      searchers.put("auto/read", roundTrip(searchers.get("auto/partitionCheap"), codes));
      String why = Randoms.describe(seed) + " bits=" + bits + " layout=" + layout + " family=" + family + " n=" + n;
      for (AdversarialCodes.Case c : AdversarialCodes.cases(codes, 2, rnd)) {
        long[] q = c.query(), mask = c.mask();
        IntPredicate accept = c.accept();
        String what = why + " " + c;
        List<int[]> kCaps = new ArrayList<>();
        for (int k : AdversarialCodes.ks(n, rnd)) kCaps.add(new int[] {k, rnd.nextInt(4) == 0 ? rnd.nextInt(3) - 1 : Integer.MAX_VALUE});
        int[] radii = {-1, 0, 1, rnd.nextInt(bits + 1), bits, Integer.MAX_VALUE};
        List<Hits> knnWant = new ArrayList<>(), radiusWant = new ArrayList<>();
        for (int[] kc : kCaps) knnWant.add(PopcountReference.knn(codes, q, kc[0], accept, mask, kc[1]));
        for (int r : radii) radiusWant.add(PopcountReference.radius(codes, q, r, accept, mask));
        for (Map.Entry<String, CodeSearcher> e : searchers.entrySet()) {
          CodeSearcher s = e.getValue();
          for (int i = 0; i < kCaps.size(); i++) {
            int[] kc = kCaps.get(i);
            assertEquals(knnWant.get(i), s.knn(q, kc[0], accept, mask, kc[1]), what + " searcher=" + e.getKey() + " k=" + kc[0] + " cap=" + kc[1]);
          }
          for (int i = 0; i < radii.length; i++)
            assertEquals(radiusWant.get(i), s.radius(q, radii[i], accept, mask), what + " searcher=" + e.getKey() + " radius=" + radii[i]);
        }
        assertTrue(c.unchanged(), what + ": the query or the mask was changed");
      }
    }
  }

  /** The searcher written as a payload and read back (every key verified). */
  static CodeSearcher roundTrip(CodeSearcher s, CodeBlock codes) {
    if (!(s instanceof MihSearcher)) return s;
    try {
      ByteArrayOutputStream bytes = new ByteArrayOutputStream();
      Searchers.write(s, new DataOutputStream(bytes));
      return Searchers.read(new DataInputStream(new ByteArrayInputStream(bytes.toByteArray())), codes);
    } catch (IOException e) {
      throw new java.io.UncheckedIOException(e);
    }
  }
}
