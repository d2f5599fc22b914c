package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.HashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.SplittableRandom;
import java.util.TreeMap;
import org.junit.jupiter.api.Test;

class CensusTest {

  /**
   * One hidden layer of 3 ReLU units on 2-D inputs whose lines (x = 0, y = 0, x + y = 1) are in
   * general position cut the plane into 1 + 3 + C(3,2) = 7 regions: T. Zaslavsky, "Facing up to
   * arrangements: face-count formulas for partitions of space by hyperplanes", Memoirs of the AMS
   * 154, 1975 (for lines in general position, r = 1 + n + C(n, 2)). The missing sign pattern is
   * (x<=0, y<=0, x+y>1). A grid over [-4, 4]^2 meets every region.
   */
  @Test
  void threeLinesInGeneralPositionGiveSevenRegions() {
    HandNet net = HandNet.threeLines();
    CodeBlock codes = net.grid(-4, 4, 81);
    Census.Result c = Census.compute(codes, new String[codes.size()], i -> "k" + i, new Census.Params(null, 10, 2));
    assertEquals(1 + 3 + 3, c.prefixes().get(0).regions());
    Set<String> seen = new HashSet<>();
    for (int i = 0; i < codes.size(); i++) seen.add(bits(codes, i, 0, 3));
    assertThat(seen).doesNotContain("001").hasSize(7);
    assertEquals(7, c.prefixes().get(0).regions());
    assertThat(c.neurons().get(0).dead()).isEmpty();
    assertThat(c.neurons().get(0).alwaysOn()).isEmpty();
  }

  /** Four lines in general position: 1 + 4 + C(4,2) = 11 regions (Zaslavsky 1975, as above). */
  @Test
  void fourLinesInGeneralPositionGiveElevenRegions() {
    double[][] w = {{1, 0}, {0, 1}, {1, 1}, {1, -2}};
    double[] b = {0, 0, -1, -0.5};
    CodeBlock codes = new HandNet(w, b).grid(-10, 10, 201);
    Census.Result c = Census.compute(codes, new String[codes.size()], i -> "k" + i, new Census.Params(null, 0, 0));
    assertEquals(1 + 4 + 6, c.prefixes().get(0).regions());
  }

  @Test
  void censusEqualsDirectComputationOnReluCodes() {
    for (int rep = 0; rep < 8; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      SyntheticCodes.Sample s = SyntheticCodes.reluLike(200 + rnd.nextInt(300), 4 + rnd.nextInt(12), 3 + rnd.nextInt(10), seed);
      CodeBlock codes = s.codes();
      int n = codes.size();
      String[] labels = new String[n], keys = new String[n];
      for (int i = 0; i < n; i++) keys[i] = "key-" + i;
      for (int i = 0; i < n; i++) labels[i] = rnd.nextInt(5) == 0 ? null : "c" + (s.cluster()[i] % 4);
      Census.Result c = Census.compute(codes, labels, i -> keys[i], new Census.Params(null, 3, 2));
      String why = Randoms.describe(seed);
      assertEquals(n, c.examples(), why);
      CodeLayout layout = codes.layout();
      int end = 0;
      for (int p = 0; p < layout.segments().size(); p++) {
        end += layout.segments().get(p).bits();
        // direct: group by the bit string of the prefix
        Map<String, List<Integer>> regions = new HashMap<>();
        for (int i = 0; i < n; i++) regions.computeIfAbsent(bits(codes, i, 0, end), k -> new ArrayList<>()).add(i);
        Census.Prefix got = c.prefixes().get(p);
        assertEquals(regions.size(), got.regions(), why);
        assertEquals(end, got.bits(), why);
        long single = regions.values().stream().filter(l -> l.size() == 1).count();
        assertEquals(single, got.singletons(), why);
        int max = regions.values().stream().mapToInt(List::size).max().orElseThrow();
        assertEquals(max, got.quantiles().max(), why);
        assertEquals(max, got.largest().get(0).count(), why);
        assertEquals(n / (double) regions.size(), got.quantiles().mean(), 1e-12, why);
        List<Integer> sizes = regions.values().stream().map(List::size).sorted().toList();
        // nearest-rank median: the smallest size with at least half of the regions at or below it
        int median = sizes.stream().filter(x -> sizes.stream().filter(y -> y <= x).count() * 2 >= sizes.size()).findFirst().orElseThrow();
        assertEquals(median, got.quantiles().p50(), why);
        assertEquals(regions.size(), got.histogram().stream().mapToInt(Census.Bucket::regions).sum(), why);
        assertEquals(n, got.histogram().stream().mapToLong(Census.Bucket::examples).sum(), why);
        for (Census.Bucket bk : got.histogram())
          assertEquals(sizes.stream().filter(x -> x >= bk.min() && x <= bk.max()).count(), bk.regions(), why);
        // purity: sum over regions of the majority label count / labelled examples
        long maj = 0, lab = 0;
        for (List<Integer> members : regions.values()) {
          Map<String, Integer> cnt = new TreeMap<>();
          for (int i : members) if (labels[i] != null) cnt.merge(labels[i], 1, Integer::sum);
          maj += cnt.values().stream().mapToInt(x -> x).max().orElse(0);
          lab += cnt.values().stream().mapToInt(x -> x).sum();
        }
        assertEquals(maj / (double) lab, got.purity(), 1e-12, why);
      }
      // firing rates, dead and always-on
      int bit = 0;
      for (Census.Neurons layer : c.neurons()) {
        for (int u = 0; u < layer.firingRates().length; u++, bit++) {
          int on = 0;
          for (int i = 0; i < n; i++) if (codes.bit(i, bit)) on++;
          assertEquals(on / (double) n, layer.firingRates()[u], 1e-12, why);
          assertEquals(on == 0, layer.dead().contains(layer.layer() + ":" + u), why);
          assertEquals(on == n, layer.alwaysOn().contains(layer.layer() + ":" + u), why);
        }
      }
    }
  }

  @Test
  void prefixesFollowTheChosenLayerOrder() {
    SyntheticCodes.Sample s = SyntheticCodes.reluLike(300, 10, 6, Randoms.seed(99));
    int n = s.codes().size();
    Census.Result c = Census.compute(s.codes(), new String[n], i -> "k" + i, new Census.Params(List.of("h2"), 1, 1));
    assertEquals(1, c.prefixes().size());
    assertEquals(List.of("h2"), c.prefixes().get(0).layers());
    Set<String> direct = new HashSet<>();
    for (int i = 0; i < n; i++) direct.add(bits(s.codes(), i, 10, 16));
    assertEquals(direct.size(), c.prefixes().get(0).regions());
    assertEquals(null, c.prefixes().get(0).purity());
    // the neuron section covers the chosen layers only (it listed every layer whatever --layers said)
    assertEquals(1, c.neurons().size());
    assertEquals("h2", c.neurons().get(0).layer());
    assertEquals(6, c.neurons().get(0).firingRates().length);
    for (int u = 0; u < 6; u++) {
      int on = 0;
      for (int i = 0; i < n; i++) if (s.codes().bit(i, 10 + u)) on++;
      assertEquals(on / (double) n, c.neurons().get(0).firingRates()[u], 1e-12);
    }
  }

  @Test
  void emptyData() {
    CodeBlock none = new CodeBlock(CodeLayout.parse("h1:5,h2:3"), 0, new long[0]);
    Census.Result c = Census.compute(none, new String[0], i -> "k" + i, new Census.Params(null, 3, 3));
    assertEquals(0, c.examples());
    assertEquals(0, c.prefixes().get(1).regions());
    assertEquals(null, c.prefixes().get(1).purity());
    assertThat(c.prefixes().get(1).histogram()).isEmpty();
    assertThat(c.neurons().get(0).dead()).isEmpty(); // no data: no neuron is called dead
    for (Census.Neurons layer : c.neurons()) // nor given a rate of 0 (it was, beside an empty dead list)
      assertThat(layer.firingRates()).as(layer.layer()).hasSize(layer.layer().equals("h1") ? 5 : 3).containsOnly(Double.NaN);
  }

  /** n codes of 3 units: unit 0 never on, unit 1 always on, unit 2 on for even rows. */
  private static Census.Result threeUnits(int n) {
    long[] words = new long[n];
    for (int i = 0; i < n; i++) words[i] = 0b010 | (i % 2 == 0 ? 0b100 : 0);
    return Census.compute(new CodeBlock(CodeLayout.parse("h:3"), n, words), new String[n], i -> "k" + i, new Census.Params(null, 0, 0));
  }

  /**
   * A unit never on (always on) is called dead (always on) only when the 95% bound of its firing (off)
   * rate, 1 - 0.05^(1/n), is at most 5%; below that the lists are empty, though the rates still show 0 and 1.
   */
  @Test
  void unitsAreCalledDeadOnlyFromEnoughExamples() {
    for (int n : new int[] {1, 2, 20, 57, 58, 59, 60, 1000, 19_800}) {
      Census.Result c = threeUnits(n);
      boolean call = 1 - Math.pow(0.05, 1.0 / n) <= 0.05;
      String why = "n = " + n;
      assertEquals(!call, c.tooFewToCall(), why);
      assertEquals(1 - Math.pow(0.05, 1.0 / n), c.rateBound(), 1e-12, why);
      Census.Neurons h = c.neurons().get(0);
      assertEquals(call ? List.of("h:0") : List.of(), h.dead(), why);
      assertEquals(call ? List.of("h:1") : List.of(), h.alwaysOn(), why);
      assertEquals(0.0, h.firingRates()[0], why);
      assertEquals(1.0, h.firingRates()[1], why);
    }
    assertThat(Census.CALL_EXAMPLES).isEqualTo(59); // the first n with 1 - 0.05^(1/n) <= 5% (NeverSeenBoundTest checks it against scipy)
    assertThat(threeUnits(0).tooFewToCall()).isTrue();
    assertThat(threeUnits(0).rateBound()).isNaN();
    assertThat(threeUnits(0).deadNote()).isNull();
  }

  /**
   * The sentence beside the counts, at 1, 20, 1,000 and 19,800 examples. The percentages are
   * scipy.stats.beta.ppf(0.95, 1, n) (golden/never-seen-bound.csv: 0.95, 0.1391, 0.002991, 0.0001513)
   * rounded up to 2 significant digits.
   */
  @Test
  void noteSaysWhatTheCountsClaim() {
    assertEquals("Too few examples to call a unit dead or always on: a unit never on in 1 example may still fire on up to 95% of"
        + " inputs like them (95% upper bound); it takes 59 examples to bring that bound to 5% or less.", threeUnits(1).deadNote());
    assertEquals("Too few examples to call a unit dead or always on: a unit never on in 20 examples may still fire on up to 14% of"
        + " inputs like them (95% upper bound); it takes 59 examples to bring that bound to 5% or less.", threeUnits(20).deadNote());
    assertEquals("Dead: never on in these 1,000 examples, so its firing rate on inputs like them is below 0.30% (95% upper bound);"
        + " always on: never off in them, so its off rate is below 0.30%.", threeUnits(1000).deadNote());
    assertEquals("Dead: never on in these 19,800 examples, so its firing rate on inputs like them is below 0.016% (95% upper bound);"
        + " always on: never off in them, so its off rate is below 0.016%.", threeUnits(19_800).deadNote());
  }

  /** A bound printed as a percentage is never below the bound and keeps 2 significant digits. */
  @Test
  void printedBoundsRoundUp() {
    long seed = Randoms.seed(7);
    SplittableRandom rnd = new SplittableRandom(seed);
    for (int rep = 0; rep < 2000; rep++) {
      double share = Math.pow(10, -7 * rnd.nextDouble()) * rnd.nextDouble();
      String s = Census.percentAtMost(share);
      java.math.BigDecimal printed = new java.math.BigDecimal(s.substring(0, s.length() - 1));
      String why = share + " printed " + s + ", " + Randoms.describe(seed);
      assertThat(printed.compareTo(java.math.BigDecimal.valueOf(share).movePointRight(2))).as(why).isGreaterThanOrEqualTo(0);
      assertThat(printed.stripTrailingZeros().precision()).as(why).isLessThanOrEqualTo(2);
      assertThat(printed.doubleValue()).as(why).isLessThan(100 * share * 1.1 + 1e-300);
    }
  }

  /**
   * The largest regions listed, in full (size, neurons on, label counts, keys of the first members)
   * and in order (largest first, ties by the smallest member), against a direct grouping, on codes
   * drawn from a few distinct ones so that many regions tie in size; and the other counts of each
   * prefix against the same grouping.
   */
  @Test
  void largestRegionsAndTheirTiesAgainstDirectGrouping() {
    for (int rep = 0; rep < 12; rep++) {
      long seed = Randoms.seed(100 + rep);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = rnd.nextInt(400), distinct = 1 + rnd.nextInt(60);
      CodeBlock base = SyntheticCodes.reluLike(Math.max(distinct, 1), 3 + rnd.nextInt(70), 2 + rnd.nextInt(6), seed).codes();
      boolean[][] rows = new boolean[n][];
      for (int i = 0; i < n; i++) {
        int from = rnd.nextInt(base.size());
        rows[i] = new boolean[base.layout().bits()];
        for (int b = 0; b < rows[i].length; b++) rows[i][b] = base.bit(from, b) ^ (rnd.nextInt(40) == 0); // a few flipped bits
      }
      CodeBlock codes = CodeBlock.fromBits(base.layout(), rows);
      String[] labels = new String[n], keys = new String[n];
      for (int i = 0; i < n; i++) {
        keys[i] = "k" + i;
        labels[i] = rnd.nextInt(4) == 0 ? null : rnd.nextInt(9) == 0 ? "" : "c" + rnd.nextInt(3);
      }
      int largest = new int[] {0, 1, 3, 50, Integer.MAX_VALUE}[rnd.nextInt(5)], examples = rnd.nextInt(5);
      Census.Result c = Census.compute(codes, labels, i -> keys[i], new Census.Params(null, largest, examples));
      int end = 0;
      for (int p = 0; p < codes.layout().segments().size(); p++) {
        end += codes.layout().segments().get(p).bits();
        Map<String, List<Integer>> regions = new HashMap<>();
        for (int i = 0; i < n; i++) regions.computeIfAbsent(bits(codes, i, 0, end), k -> new ArrayList<>()).add(i);
        List<Map.Entry<String, List<Integer>>> sorted = new ArrayList<>(regions.entrySet());
        sorted.sort((a, b) -> a.getValue().size() != b.getValue().size() ? b.getValue().size() - a.getValue().size()
            : a.getValue().get(0) - b.getValue().get(0));
        Census.Prefix got = c.prefixes().get(p);
        assertEquals(regions.size(), got.regions(), why);
        assertEquals(Math.min(largest, regions.size()), got.largest().size(), why + " prefix " + p);
        for (int r = 0; r < got.largest().size(); r++) {
          List<Integer> members = sorted.get(r).getValue();
          Census.Big big = got.largest().get(r);
          String at = why + " prefix " + p + " region " + r;
          assertEquals(members.size(), big.count(), at);
          assertEquals(sorted.get(r).getKey().chars().filter(ch -> ch == '1').count(), big.active(), at);
          Map<String, Integer> mix = new HashMap<>();
          for (int i : members) if (labels[i] != null && !labels[i].isEmpty()) mix.merge(labels[i], 1, Integer::sum);
          assertEquals(Region.sortedCounts(mix), big.labels(), at);
          assertEquals(new ArrayList<>(big.labels().keySet()), new ArrayList<>(Region.sortedCounts(mix).keySet()), at + " label order");
          assertEquals(members.subList(0, Math.min(examples, members.size())).stream().map(i -> keys[i]).toList(), big.keys(), at);
        }
        long single = regions.values().stream().filter(l -> l.size() == 1).count();
        assertEquals(single, got.singletons(), why);
        long maj = 0, lab = 0;
        for (List<Integer> members : regions.values()) {
          Map<String, Integer> cnt = new TreeMap<>();
          for (int i : members) if (labels[i] != null && !labels[i].isEmpty()) cnt.merge(labels[i], 1, Integer::sum);
          maj += cnt.values().stream().mapToInt(x -> x).max().orElse(0);
          lab += cnt.values().stream().mapToInt(x -> x).sum();
        }
        if (lab == 0) assertEquals(null, got.purity(), why);
        else assertEquals(maj / (double) lab, got.purity(), 1e-12, why);
      }
    }
  }

  /**
   * Purity counts an example alone in its region as pure. A new user's breast-cancer index (231 bits,
   * 369 of 379 regions singletons) read label purity 98% with the labels shuffled at random, as with
   * the true ones. Each prefix now also gives the share of labelled examples with no other labelled
   * example in their region, and the purity over the regions that hold at least two (null when none):
   * both against a direct grouping of the codes, with labels that follow the clusters and labels drawn
   * at random.
   */
  @Test
  void purityWhereARegionHoldsTwoLabelsAndTheShareAloneEqualDirectComputation() {
    for (int rep = 0; rep < 8; rep++) {
      long seed = Randoms.seed(100 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      SyntheticCodes.Sample s = SyntheticCodes.reluLike(150 + rnd.nextInt(300), 4 + rnd.nextInt(12), 3 + rnd.nextInt(10), seed);
      CodeBlock codes = s.codes();
      int n = codes.size();
      boolean random = rep % 2 == 0;
      String[] labels = new String[n], keys = new String[n];
      for (int i = 0; i < n; i++) {
        keys[i] = "key-" + i;
        labels[i] = rnd.nextInt(4) == 0 ? null : "c" + (random ? rnd.nextInt(3) : s.cluster()[i] % 4);
      }
      Census.Result c = Census.compute(codes, labels, i -> keys[i], new Census.Params(null, 3, 2));
      String why = Randoms.describe(seed);
      int end = 0;
      for (int p = 0; p < codes.layout().segments().size(); p++) {
        end += codes.layout().segments().get(p).bits();
        Map<String, List<Integer>> regions = new HashMap<>();
        for (int i = 0; i < n; i++) regions.computeIfAbsent(bits(codes, i, 0, end), k -> new ArrayList<>()).add(i);
        long alone = 0, lab = 0, majShared = 0, labShared = 0;
        for (List<Integer> members : regions.values()) {
          Map<String, Integer> cnt = new TreeMap<>();
          for (int i : members) if (labels[i] != null) cnt.merge(labels[i], 1, Integer::sum);
          int here = cnt.values().stream().mapToInt(x -> x).sum();
          lab += here;
          if (here == 1) alone++;
          else if (here > 1) {
            labShared += here;
            majShared += cnt.values().stream().mapToInt(x -> x).max().orElseThrow();
          }
        }
        Census.Prefix got = c.prefixes().get(p);
        assertEquals(alone / (double) lab, got.labelledAlone(), 1e-12, why);
        if (labShared == 0) assertEquals(null, got.purityShared(), why);
        else assertEquals(majShared / (double) labShared, got.purityShared(), 1e-12, why);
      }
    }
  }

  static String bits(CodeBlock codes, int i, int from, int to) {
    StringBuilder sb = new StringBuilder();
    for (int b = from; b < to; b++) sb.append(codes.bit(i, b) ? '1' : '0');
    return sb.toString();
  }
}
