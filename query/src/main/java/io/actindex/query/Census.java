package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.index.store.IndexReader;
import io.actindex.query.stats.NeverSeenBound;
import java.math.BigDecimal;
import java.math.MathContext;
import java.math.RoundingMode;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Comparator;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.PriorityQueue;
import java.util.function.IntFunction;

/**
 * What the data looks like in code space, over the live examples: for each prefix of the layers
 * (the first layer, the first two, ...) how many distinct regions (codes) the examples occupy, how
 * the examples spread over them (histogram, quantiles, the largest regions) and how pure the
 * regions are in labels; and for every neuron of those layers how often it fires, with the dead (never on) and
 * always-on neurons listed as {@code layer:unit}. A unit never on in {@code n} examples may still fire on new
 * inputs: {@link Result#rateBound()} says how often at most (95%), and units are called dead or always on only
 * when that bound is at most {@link #CALL_LIMIT}.
 *
 * <pre>{@code
 * Census.Result c = Census.run(reader, new Census.Params(null, 10, 3));
 * }</pre>
 */
public final class Census {
  private Census() {}

  /**
   * The largest 95% upper bound of a firing rate (of an off rate) at which a unit never on (always on)
   * is still called dead (always on): 5%, reached at {@link #CALL_EXAMPLES} examples. A choice, not a
   * standard: with a larger bound, a unit that never fired could still fire on more than one input in
   * 20, too often to call it dead.
   */
  public static final double CALL_LIMIT = 0.05;

  /** The fewest live examples at which units are called dead or always on (59 for 5%). */
  public static final long CALL_EXAMPLES = NeverSeenBound.examplesFor(CALL_LIMIT);

  /**
   * {@code layers}: the layers, in prefix order (null or empty = all, in layout order); {@code
   * largest}: how many of the largest regions to list per prefix; {@code examples}: keys per listed region.
   */
  public record Params(List<String> layers, int largest, int examples) {
    public Params {
      if (largest < 0) throw new BadParameterException("largest", " must be at least 0, got " + largest);
      if (examples < 0) throw new BadParameterException("examples", " must be at least 0, got " + examples);
      layers = layers == null ? List.of() : List.copyOf(layers);
    }
  }

  /** One bucket of the occupancy histogram: regions holding {@code min..max} examples. */
  public record Bucket(int min, int max, int regions, long examples) {}

  /**
   * Quantiles of examples per region over the regions (nearest-rank: the smallest count c such that
   * at least q of the regions hold at most c examples). Null for a prefix with no region (no live
   * example): there is no size to describe.
   */
  public record Quantiles(int min, int p50, int p90, int p99, int max, double mean) {}

  /** One of the largest regions: its size, how many neurons are on in it, its labels and some keys. */
  public record Big(int count, int active, Map<String, Integer> labels, List<String> keys) {}

  /**
   * Census of one prefix of layers. {@code purity}: the fraction of labelled examples whose
   * label is their region's majority label (null when no example has a label); {@code singletons}:
   * regions holding a single example. An example with no other labelled example in its region
   * counts as pure whatever its label: {@code labelledAlone} is the fraction of labelled examples
   * that are so (null without labels), {@code purityShared} the purity over the regions that hold at
   * least two labelled examples, where labels can disagree (null when no region does).
   */
  public record Prefix(List<String> layers, int bits, int regions, int singletons, List<Bucket> histogram, Quantiles quantiles,
      Double purity, List<Big> largest, Double labelledAlone, Double purityShared) {}

  /**
   * Firing rates of one layer's units (NaN without examples), and its dead and always-on units
   * ({@code layer:unit}): those never on (on for every example), listed only when the examples are
   * enough to call them so ({@link Result#tooFewToCall()} false), else empty.
   */
  public record Neurons(String layer, double[] firingRates, List<String> dead, List<String> alwaysOn) {}

  public record Result(int examples, List<Prefix> prefixes, List<Neurons> neurons) {
    /**
     * The 95% upper bound of the firing rate of a unit never on in these examples (of the off rate
     * of one always on): {@code 1 - 0.05^(1/examples)}, about {@code 3/examples}; NaN without examples.
     */
    public double rateBound() {
      return NeverSeenBound.upper(examples);
    }

    /** True when the examples are too few (or none) to call a unit dead or always on: the bound is above {@link #CALL_LIMIT}. */
    public boolean tooFewToCall() {
      return examples < CALL_EXAMPLES;
    }

    /**
     * One sentence on what the dead and always-on counts claim: the bound at these examples, or why no
     * unit is called either; null without examples.
     */
    public String deadNote() {
      if (examples == 0) return null;
      String n = String.format(Locale.ROOT, "%,d", examples) + (examples == 1 ? " example" : " examples");
      String bound = percentAtMost(rateBound());
      if (tooFewToCall())
        return "Too few examples to call a unit dead or always on: a unit never on in " + n + " may still fire on up to " + bound
            + " of inputs like them (95% upper bound); it takes " + CALL_EXAMPLES + " examples to bring that bound to "
            + percentAtMost(CALL_LIMIT) + " or less.";
      return "Dead: never on in these " + n + ", so its firing rate on inputs like them is below " + bound + " (95% upper bound);"
          + " always on: never off in them, so its off rate is below " + bound + ".";
    }
  }

  /** A share as a percentage of 2 significant digits rounded up, so that a bound stays a bound (0.0029912 -> "0.30%"). */
  static String percentAtMost(double share) {
    return BigDecimal.valueOf(share).movePointRight(2).round(new MathContext(2, RoundingMode.CEILING)).toPlainString() + "%";
  }

  public static Result run(IndexReader reader, Params p) {
    return run(reader, p, null);
  }

  /**
   * As {@link #run(IndexReader, Params)}, with {@code progress} (null: none) told the layer prefixes
   * counted of all (0 while the codes and labels are read).
   */
  public static Result run(IndexReader reader, Params p, Progress progress) {
    if (progress != null) progress.update(0, Layers.select(reader.layout(), p.layers()).length);
    int[] ids = new int[reader.liveCount()];
    CodeBlock codes = reader.liveCodes(ids);
    LabelIndex labelIndex = LabelIndex.of(reader.meta(), reader.maxId());
    String[] labels = new String[ids.length];
    for (int i = 0; i < ids.length; i++) labels[i] = labelIndex.label(ids[i]);
    return compute(codes, labels, i -> {
      Map<String, String> doc = reader.meta().document(ids[i]);
      return doc == null ? null : doc.get("key");
    }, p, progress);
  }

  /**
   * The census of {@code codes}, with {@code labels[i]} (null = none) and the key {@code
   * keyOf.apply(i)} (asked only for the listed regions' examples) of code {@code i}. Independent
   * of the store, so callers may run it on any code block.
   */
  public static Result compute(CodeBlock codes, String[] labels, IntFunction<String> keyOf, Params p) {
    return compute(codes, labels, keyOf, p, null);
  }

  /** As {@link #compute(CodeBlock, String[], IntFunction, Params)}, with {@code progress} (null: none) told the prefixes done of all. */
  public static Result compute(CodeBlock codes, String[] labels, IntFunction<String> keyOf, Params p, Progress progress) {
    CodeLayout layout = codes.layout();
    int n = codes.size();
    if (labels.length != n) throw new IllegalArgumentException("labels need one entry per code");
    int[] order = Layers.select(layout, p.layers());
    List<Prefix> prefixes = new ArrayList<>();
    long[] mask = new long[layout.words()];
    List<String> names = new ArrayList<>();
    int bits = 0;
    for (int s : order) {
      long[] m = layout.mask(s);
      for (int w = 0; w < mask.length; w++) mask[w] |= m[w];
      names.add(layout.segments().get(s).name());
      bits += layout.segments().get(s).bits();
      prefixes.add(prefix(codes, mask, List.copyOf(names), bits, labels, keyOf, p));
      if (progress != null) progress.update(prefixes.size(), order.length);
    }
    return new Result(n, List.copyOf(prefixes), neurons(codes, order));
  }

  /**
   * One prefix: the examples sorted by their masked code (ties by id), so that each region is a run
   * of that order holding its members in ascending id. At most about 30 bytes per example beside the
   * masked codes (while sorting), where a hash map of codes to lists of boxed ids took about 200.
   */
  private static Prefix prefix(CodeBlock codes, long[] mask, List<String> names, int bits, String[] labels,
      IntFunction<String> keyOf, Params p) {
    int n = codes.size(), w = codes.wordsPerCode();
    long[] data = codes.words(), masked = new long[data.length];
    for (int i = 0; i < n; i++) for (int j = 0; j < w; j++) masked[i * w + j] = data[i * w + j] & mask[j];
    int[] order = byCode(masked, n, w);
    int[] start = new int[n + 1]; // run r (a region) is order[start[r] .. start[r + 1])
    int runs = 0;
    for (int i = 0; i < n; i++) if (i == 0 || !Arrays.equals(masked, order[i - 1] * w, order[i - 1] * w + w, masked, order[i] * w, order[i] * w + w)) start[runs++] = i;
    start[runs] = n;
    int[] sizes = new int[runs];
    int singletons = 0;
    long majority = 0, labeled = 0, alone = 0, majorityShared = 0, labeledShared = 0;
    for (int r = 0; r < runs; r++) {
      sizes[r] = start[r + 1] - start[r];
      if (sizes[r] == 1) {
        singletons++;
        String l = labels[order[start[r]]];
        if (l != null && !l.isEmpty()) {
          labeled++;
          majority++;
          alone++;
        }
        continue;
      }
      Map<String, Integer> mix = mix(order, start[r], start[r + 1], labels);
      int here = 0, most = 0;
      for (int c : mix.values()) {
        here += c;
        most = Math.max(most, c);
      }
      labeled += here;
      majority += most;
      if (here == 1) alone++;
      else if (here > 1) {
        labeledShared += here;
        majorityShared += most;
      }
    }
    // largest first; ties by the smallest member (the run's first), so the listing is deterministic
    Comparator<Integer> bigFirst = (a, b) -> sizes[a] != sizes[b] ? Integer.compare(sizes[b], sizes[a])
        : Integer.compare(order[start[a]], order[start[b]]);
    PriorityQueue<Integer> top = new PriorityQueue<>(bigFirst.reversed()); // the worst of the kept ones at the head
    for (int r = 0; r < runs && p.largest() > 0; r++) {
      if (top.size() < p.largest()) top.add(r);
      else if (bigFirst.compare(r, top.peek()) < 0) {
        top.poll();
        top.add(r);
      }
    }
    List<Integer> big = new ArrayList<>(top);
    big.sort(bigFirst);
    List<Big> largest = new ArrayList<>();
    for (int r : big) {
      List<String> ks = new ArrayList<>();
      for (int i = start[r]; i < Math.min(start[r + 1], start[r] + p.examples()); i++) ks.add(keyOf.apply(order[i]));
      int active = 0, first = order[start[r]];
      for (int j = 0; j < w; j++) active += Long.bitCount(masked[first * w + j]);
      largest.add(new Big(sizes[r], active, Region.sortedCounts(mix(order, start[r], start[r + 1], labels)), ks));
    }
    Arrays.sort(sizes);
    return new Prefix(names, bits, sizes.length, singletons, histogram(sizes), quantiles(sizes, n),
        labeled == 0 ? null : majority / (double) labeled, List.copyOf(largest), labeled == 0 ? null : alone / (double) labeled,
        labeledShared == 0 ? null : majorityShared / (double) labeledShared);
  }

  /** The ids {@code 0..n-1} ordered by their code in {@code masked} ({@code w} words each, compared word by word), ties by id. */
  private static int[] byCode(long[] masked, int n, int w) {
    Integer[] ids = new Integer[n];
    for (int i = 0; i < n; i++) ids[i] = i;
    Arrays.sort(ids, (a, b) -> {
      int c = Arrays.compare(masked, a * w, a * w + w, masked, b * w, b * w + w);
      return c != 0 ? c : Integer.compare(a, b);
    });
    int[] out = new int[n];
    for (int i = 0; i < n; i++) out[i] = ids[i];
    return out;
  }

  /** Label counts of the members {@code order[from..to)}. */
  private static Map<String, Integer> mix(int[] order, int from, int to, String[] labels) {
    Map<String, Integer> mix = new HashMap<>();
    for (int i = from; i < to; i++) {
      String l = labels[order[i]];
      if (l != null && !l.isEmpty()) mix.merge(l, 1, Integer::sum);
    }
    return mix;
  }

  /** Buckets 1, 2, 3-4, 5-8, ... (powers of two); only non-empty buckets. */
  static List<Bucket> histogram(int[] sortedSizes) {
    List<Bucket> out = new ArrayList<>();
    int i = 0;
    for (long lo = 1, hi = 1; i < sortedSizes.length; lo = hi + 1, hi *= 2) {
      int regions = 0;
      long examples = 0;
      while (i < sortedSizes.length && sortedSizes[i] <= hi) {
        regions++;
        examples += sortedSizes[i++];
      }
      if (regions > 0) out.add(new Bucket((int) lo, (int) Math.min(hi, Integer.MAX_VALUE), regions, examples));
    }
    return out;
  }

  static Quantiles quantiles(int[] sortedSizes, int examples) {
    if (sortedSizes.length == 0) return null;
    return new Quantiles(sortedSizes[0], rank(sortedSizes, 0.5), rank(sortedSizes, 0.9), rank(sortedSizes, 0.99),
        sortedSizes[sortedSizes.length - 1], examples / (double) sortedSizes.length);
  }

  /** Nearest-rank quantile: element ceil(q * n) (1-based). Common practice. */
  private static int rank(int[] sorted, double q) {
    int k = (int) Math.ceil(q * sorted.length);
    return sorted[Math.max(0, k - 1)];
  }

  /** Firing rates of the units of the layers {@code order} (indexes into the layout), in that order. */
  private static List<Neurons> neurons(CodeBlock codes, int[] order) {
    CodeLayout layout = codes.layout();
    int n = codes.size();
    long[] on = new long[layout.bits()];
    for (int i = 0; i < n; i++) {
      long[] data = codes.words();
      int off = i * codes.wordsPerCode();
      for (int w = 0; w < codes.wordsPerCode(); w++)
        for (long x = data[off + w]; x != 0; x &= x - 1) on[(w << 6) + Long.numberOfTrailingZeros(x)]++;
    }
    List<Neurons> out = new ArrayList<>();
    for (int s : order) {
      CodeLayout.Segment seg = layout.segments().get(s);
      int start = layout.start(s);
      double[] rates = new double[seg.bits()];
      List<String> dead = new ArrayList<>(), always = new ArrayList<>();
      boolean call = n >= CALL_EXAMPLES; // too few examples (or none): no unit called dead or always on
      for (int u = 0; u < seg.bits(); u++) {
        long c = on[start + u];
        rates[u] = n == 0 ? Double.NaN : c / (double) n; // no example: no rate (null in JSON)
        if (call && c == 0) dead.add(seg.name() + ":" + u);
        if (call && c == n) always.add(seg.name() + ":" + u);
      }
      out.add(new Neurons(seg.name(), rates, List.copyOf(dead), List.copyOf(always)));
    }
    return List.copyOf(out);
  }
}
