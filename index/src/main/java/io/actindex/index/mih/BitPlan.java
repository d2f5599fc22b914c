package io.actindex.index.mih;

import io.actindex.index.CodeBlock;
import io.actindex.index.CodeLayout;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * Which bits the hash tables key on. Bits constant over the indexed codes are left out (the codes
 * all agree on them, so they add the same amount, {@link #constantDistance}, to every distance);
 * the rest, or the highest-entropy part of them for long codes, are cut into disjoint substrings of
 * at most 32 bits, one per table. Bits of one table are kept in ascending position order, and a
 * table's key packs them low to high. Immutable.
 */
final class BitPlan {
  private final int bits;
  private final long[] constMask;
  private final long[] constValue;
  private final int[][] tableBits;
  // per table: the words it reads, the bits taken from each, and where they land in the key
  private final int[][] keyWords;
  private final long[][] keyMasks;
  private final int[][] keyShifts;

  /** Checks and freezes a plan; IllegalArgumentException names what is inconsistent. */
  BitPlan(int bits, long[] constMask, long[] constValue, int[][] tableBits) {
    int w = (bits + 63) >>> 6;
    if (bits <= 0) throw new IllegalArgumentException("plan has " + bits + " bits");
    if (constMask.length != w || constValue.length != w)
      throw new IllegalArgumentException("constant-bit masks have " + constMask.length + "/" + constValue.length + " words, codes have " + w);
    long ghost = bits % 64 == 0 ? 0 : -1L << (bits & 63);
    if ((constMask[w - 1] & ghost) != 0) throw new IllegalArgumentException("constant-bit mask has bits beyond " + bits);
    for (int i = 0; i < w; i++)
      if ((constValue[i] & ~constMask[i]) != 0) throw new IllegalArgumentException("constant values outside the constant-bit mask in word " + i);
    long[] seen = constMask.clone();
    for (int t = 0; t < tableBits.length; t++) {
      int[] tb = tableBits[t];
      if (tb.length < 1 || tb.length > SearchPlanOptions.MAX_SUBSTRING_BITS)
        throw new IllegalArgumentException("substring " + t + " has " + tb.length + " bits; needs 1 to " + SearchPlanOptions.MAX_SUBSTRING_BITS);
      for (int i = 0; i < tb.length; i++) {
        int b = tb[i];
        if (b < 0 || b >= bits) throw new IllegalArgumentException("substring " + t + " names bit " + b + " outside 0.." + (bits - 1));
        if (i > 0 && tb[i - 1] >= b) throw new IllegalArgumentException("substring " + t + " bits are not strictly ascending at " + i);
        if ((seen[b >>> 6] >>> (b & 63) & 1) != 0)
          throw new IllegalArgumentException("bit " + b + " of substring " + t + " is constant or already in another substring");
        seen[b >>> 6] |= 1L << (b & 63);
      }
    }
    this.bits = bits;
    this.constMask = constMask.clone();
    this.constValue = constValue.clone();
    this.tableBits = new int[tableBits.length][];
    int m = tableBits.length;
    keyWords = new int[m][];
    keyMasks = new long[m][];
    keyShifts = new int[m][];
    for (int t = 0; t < m; t++) {
      this.tableBits[t] = tableBits[t].clone();
      long[] mask = new long[w];
      for (int b : tableBits[t]) mask[b >>> 6] |= 1L << (b & 63);
      int used = 0;
      for (long x : mask) if (x != 0) used++;
      keyWords[t] = new int[used];
      keyMasks[t] = new long[used];
      keyShifts[t] = new int[used];
      int j = 0, shift = 0;
      for (int i = 0; i < w; i++)
        if (mask[i] != 0) {
          keyWords[t][j] = i;
          keyMasks[t][j] = mask[i];
          keyShifts[t][j++] = shift;
          shift += Long.bitCount(mask[i]);
        }
    }
  }

  int bits() {
    return bits;
  }

  int tables() {
    return tableBits.length;
  }

  int width(int t) {
    return tableBits[t].length;
  }

  int[] tableBits(int t) {
    return tableBits[t].clone();
  }

  long[] constMask() {
    return constMask.clone();
  }

  long[] constValue() {
    return constValue.clone();
  }

  int constantBits() {
    int c = 0;
    for (long x : constMask) c += Long.bitCount(x);
    return c;
  }

  int indexedBits() {
    int c = 0;
    for (int[] tb : tableBits) c += tb.length;
    return c;
  }

  /** True if every bit of table {@code t} is set in {@code mask}. */
  boolean tableInside(int t, long[] mask) {
    for (int i = 0; i < keyWords[t].length; i++)
      if ((keyMasks[t][i] & ~mask[keyWords[t][i]]) != 0) return false;
    return true;
  }

  /** The key of table {@code t} for the code at {@code code[off ..]}. */
  int key(long[] code, int off, int t) {
    int[] ws = keyWords[t];
    long[] ms = keyMasks[t];
    int[] sh = keyShifts[t];
    long key = 0;
    for (int i = 0; i < ws.length; i++) key |= Long.compress(code[off + ws[i]], ms[i]) << sh[i];
    return (int) key;
  }

  /**
   * What the constant bits add to the distance from {@code query} to every indexed code, counting
   * only bits in {@code mask} (null = all).
   */
  int constantDistance(long[] query, long[] mask) {
    int d = 0;
    for (int i = 0; i < constMask.length; i++)
      d += Long.bitCount((query[i] ^ constValue[i]) & constMask[i] & (mask == null ? -1L : mask[i]));
    return d;
  }

  /** True if every code of {@code codes} carries this plan's constant values. */
  boolean constantsHold(CodeBlock codes) {
    long[] data = codes.words();
    int w = constMask.length, n = codes.size();
    for (int i = 0; i < n; i++)
      for (int j = 0; j < w; j++)
        if (((data[i * w + j] ^ constValue[j]) & constMask[j]) != 0) return false;
    return true;
  }

  // ---------------------------------------------------------------- choosing a plan

  /** Chooses the plan for {@code codes} under {@code o}. */
  static BitPlan choose(CodeBlock codes, SearchPlanOptions o) {
    CodeLayout layout = codes.layout();
    int n = codes.size(), bits = layout.bits(), w = layout.words();
    long[] counts = bitCounts(codes);
    long[] constMask = new long[w], constValue = new long[w];
    List<Integer> kept = new ArrayList<>();
    double[] entropy = new double[bits];
    for (int b = 0; b < bits; b++) {
      boolean constant = o.dropConstantBits() && n > 0 && (counts[b] == 0 || counts[b] == n);
      if (constant) {
        constMask[b >>> 6] |= 1L << (b & 63);
        if (counts[b] == n) constValue[b >>> 6] |= 1L << (b & 63);
      } else {
        kept.add(b);
        entropy[b] = n == 0 ? 0 : binaryEntropy(counts[b] / (double) n);
      }
    }
    int k = kept.size();
    if (k == 0) return new BitPlan(bits, constMask, constValue, new int[0][]);
    double lg = Math.max(1, Math.log(n) / Math.log(2));
    int m, indexed;
    if (o.substrings() > 0) {
      m = o.substrings();
      indexed = (int) Math.min(k, (long) SearchPlanOptions.MAX_SUBSTRING_BITS * m);
    } else {
      m = Math.max(1, (int) Math.round(k / lg));
      m = Math.max(m, (k + SearchPlanOptions.MAX_SUBSTRING_BITS - 1) / SearchPlanOptions.MAX_SUBSTRING_BITS);
      if (m > o.maxSubstrings()) {
        m = o.maxSubstrings();
        int width = (int) Math.min(SearchPlanOptions.MAX_SUBSTRING_BITS, Math.max(1, Math.round(lg)));
        indexed = (int) Math.min(k, (long) width * m);
      } else indexed = k;
    }
    m = Math.min(m, indexed);
    Integer[] order = kept.toArray(new Integer[0]);
    if (indexed < k) {
      // the cascade: index the most informative bits only
      Arrays.sort(order, (a, b) -> entropy[a] != entropy[b] ? Double.compare(entropy[b], entropy[a]) : Integer.compare(a, b));
      order = Arrays.copyOf(order, indexed);
      Arrays.sort(order);
    }
    int[] chosen = new int[indexed];
    for (int i = 0; i < indexed; i++) chosen[i] = order[i];
    int[][] tables = o.balance() ? balanced(codes, chosen, entropy, m) : consecutive(chosen, m);
    return new BitPlan(bits, constMask, constValue, tables);
  }

  private static int[][] consecutive(int[] chosen, int m) {
    int[][] tables = new int[m][];
    int from = 0;
    for (int t = 0; t < m; t++) {
      int size = chosen.length / m + (t < chosen.length % m ? 1 : 0);
      tables[t] = Arrays.copyOfRange(chosen, from, from + size);
      from += size;
    }
    return tables;
  }

  /**
   * Tables stay inside one layout segment where the table count allows (so per-layer masks can use
   * them); within a segment, bits go greedily, highest entropy first, to the table whose estimated
   * entropy is lowest, penalising tables that already hold a bit correlated with the new one.
   */
  private static int[][] balanced(CodeBlock codes, int[] chosen, double[] entropy, int m) {
    CodeLayout layout = codes.layout();
    int segs = layout.segments().size();
    int[] segOf = new int[chosen.length];
    int[] segBits = new int[segs];
    for (int i = 0, s = 0; i < chosen.length; i++) {
      while (chosen[i] >= layout.start(s) + layout.segments().get(s).bits()) s++;
      segOf[i] = s;
      segBits[s]++;
    }
    int nonEmpty = 0;
    for (int c : segBits) if (c > 0) nonEmpty++;
    int[] quota = new int[segs];
    if (nonEmpty > m) {
      Arrays.fill(segOf, 0);
      Arrays.fill(segBits, 0);
      segBits[0] = chosen.length;
      quota[0] = m;
    } else {
      int given = 0;
      for (int s = 0; s < segs; s++) {
        if (segBits[s] == 0) continue;
        quota[s] = Math.max(Math.max(1, (int) ((long) m * segBits[s] / chosen.length)),
            (segBits[s] + SearchPlanOptions.MAX_SUBSTRING_BITS - 1) / SearchPlanOptions.MAX_SUBSTRING_BITS);
        quota[s] = Math.min(quota[s], segBits[s]);
        given += quota[s];
      }
      while (given < m) { // the rest by largest bits-per-table
        int best = -1;
        for (int s = 0; s < segs; s++)
          if (quota[s] > 0 && quota[s] < segBits[s] && (best < 0 || (double) segBits[s] / quota[s] > (double) segBits[best] / quota[best])) best = s;
        if (best < 0) break;
        quota[best]++;
        given++;
      }
    }
    Sample sample = new Sample(codes, chosen);
    List<int[]> out = new ArrayList<>();
    for (int s = 0; s < segs; s++) {
      if (quota[s] == 0) continue;
      List<Integer> members = new ArrayList<>();
      for (int i = 0; i < chosen.length; i++) if (segOf[i] == s) members.add(i);
      out.addAll(greedy(members, chosen, entropy, quota[s], sample));
    }
    return out.toArray(new int[0][]);
  }

  private static List<int[]> greedy(List<Integer> members, int[] chosen, double[] entropy, int m, Sample sample) {
    members.sort((a, b) -> entropy[chosen[a]] != entropy[chosen[b]]
        ? Double.compare(entropy[chosen[b]], entropy[chosen[a]]) : Integer.compare(a, b));
    int total = members.size();
    int[] cap = new int[m];
    for (int t = 0; t < m; t++) cap[t] = total / m + (t < total % m ? 1 : 0);
    List<List<Integer>> tables = new ArrayList<>();
    for (int t = 0; t < m; t++) tables.add(new ArrayList<>());
    double[] load = new double[m];
    for (int i : members) {
      int best = -1;
      double bestCost = 0, bestGain = 0;
      for (int t = 0; t < m; t++) {
        if (tables.get(t).size() >= cap[t]) continue;
        double redundancy = 0;
        for (int j : tables.get(t)) redundancy = Math.max(redundancy, sample.mutualInformation(i, j));
        double cost = load[t] + 2 * redundancy;
        if (best < 0 || cost < bestCost) {
          best = t;
          bestCost = cost;
          bestGain = Math.max(0, entropy[chosen[i]] - redundancy);
        }
      }
      tables.get(best).add(i);
      load[best] += bestGain;
    }
    List<int[]> out = new ArrayList<>();
    for (List<Integer> t : tables) {
      int[] tb = new int[t.size()];
      for (int j = 0; j < tb.length; j++) tb[j] = chosen[t.get(j)];
      Arrays.sort(tb);
      out.add(tb);
    }
    return out;
  }

  /** Bit columns of up to 4096 evenly spaced codes, for pairwise mutual information. */
  private static final class Sample {
    private final long[][] columns;
    private final int size;

    Sample(CodeBlock codes, int[] chosen) {
      int n = codes.size();
      size = Math.min(n, 4096);
      columns = new long[chosen.length][(size + 63) >>> 6];
      for (int r = 0; r < size; r++) {
        int i = (int) ((long) r * n / size);
        for (int c = 0; c < chosen.length; c++)
          if (codes.bit(i, chosen[c])) columns[c][r >>> 6] |= 1L << (r & 63);
      }
    }

    double mutualInformation(int a, int b) {
      if (size == 0) return 0;
      int n11 = 0, na = 0, nb = 0;
      long[] x = columns[a], y = columns[b];
      for (int i = 0; i < x.length; i++) {
        n11 += Long.bitCount(x[i] & y[i]);
        na += Long.bitCount(x[i]);
        nb += Long.bitCount(y[i]);
      }
      double n = size;
      int n10 = na - n11, n01 = nb - n11, n00 = size - na - nb + n11;
      double ha = binaryEntropy(na / n), hb = binaryEntropy(nb / n);
      double hab = -(plogp(n11 / n) + plogp(n10 / n) + plogp(n01 / n) + plogp(n00 / n));
      return Math.max(0, ha + hb - hab);
    }
  }

  private static double plogp(double p) {
    return p <= 0 ? 0 : p * Math.log(p) / Math.log(2);
  }

  static double binaryEntropy(double p) {
    return -(plogp(p) + plogp(1 - p));
  }

  /** How many codes have each bit set. */
  static long[] bitCounts(CodeBlock codes) {
    int bits = codes.layout().bits(), w = codes.wordsPerCode(), n = codes.size();
    long[] data = codes.words();
    long[] counts = new long[bits];
    for (int i = 0; i < n; i++)
      for (int j = 0; j < w; j++) {
        long x = data[i * w + j];
        while (x != 0) {
          counts[(j << 6) + Long.numberOfTrailingZeros(x)]++;
          x &= x - 1;
        }
      }
    return counts;
  }
}
