package io.actindex.index.mih;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
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
      // about L / log2(n), rounded so that no table is wider than floor(log2 n) bits: a dense table
      // then has at most n buckets (4 bytes of offsets per code)
      m = Math.max(1, (k + (int) lg - 1) / (int) lg);
      m = Math.max(m, (k + SearchPlanOptions.MAX_SUBSTRING_BITS - 1) / SearchPlanOptions.MAX_SUBSTRING_BITS);
      if (m > o.maxSubstrings()) {
        m = o.maxSubstrings();
        int width = (int) Math.min(SearchPlanOptions.MAX_SUBSTRING_BITS, Math.max(1, (int) lg));
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

  private static int[][] balanced(CodeBlock codes, int[] chosen, double[] entropy, int m) {
    return balanced(codes, chosen, entropy, m, false);
  }

  /** {@link #greedy}'s tables; {@code scoreEvery}: score every bit left at every step (tests: the plain greedy, oracle of its shortcut). */
  static int[][] balanced(CodeBlock codes, int[] chosen, double[] entropy, int m, boolean scoreEvery) {
    List<Integer> members = new ArrayList<>();
    for (int i = 0; i < chosen.length; i++) members.add(i);
    return greedy(members, chosen, entropy, m, new Sample(codes, chosen), scoreEvery).toArray(new int[0][]);
  }

  /**
   * Draft assignment: the table whose key entropy (measured on a sample) is lowest takes, among the
   * bits left, the one that raises its entropy most (ties: the higher per-bit entropy, then the
   * lower position). Bits that copy a bit already in the table add nothing there, so correlated
   * bits end up in different tables.
   */
  private static List<int[]> greedy(List<Integer> members, int[] chosen, double[] entropy, int m, Sample sample, boolean scoreEvery) {
    members.sort((a, b) -> entropy[chosen[a]] != entropy[chosen[b]]
        ? Double.compare(entropy[chosen[b]], entropy[chosen[a]]) : Integer.compare(a, b));
    int total = members.size(), rows = sample.size;
    int[] cap = new int[m];
    for (int t = 0; t < m; t++) cap[t] = total / m + (t < total % m ? 1 : 0);
    List<List<Integer>> tables = new ArrayList<>();
    for (int t = 0; t < m; t++) tables.add(new ArrayList<>());
    int[][] group = new int[m][rows]; // group of each sample row under the table's key so far
    int[][] groupSize = new int[m][];
    for (int t = 0; t < m; t++) groupSize[t] = new int[] {rows};
    double[] h = new double[m];
    int[] ones = new int[Math.max(1, rows * 2)];
    boolean[] taken = new boolean[total];
    double most = sample.fullEntropy(members); // no key over these bits has more entropy
    int firstFree = 0;
    for (int step = 0; step < total; step++) {
      int t = -1;
      for (int u = 0; u < m; u++) if (tables.get(u).size() < cap[u] && (t < 0 || h[u] < h[t])) t = u;
      while (taken[firstFree]) firstFree++;
      int best = firstFree;
      double bestH = sample.splitEntropy(members.get(firstFree), group[t], groupSize[t], ones);
      // a key that already tells every distinct sample row apart cannot gain (any real gain is at
      // least about 2 / 8192 bits): every bit scores the key's entropy and the loop below would keep
      // the first bit left, so it is kept without trying the others (the same plan: wide codes cut
      // into few parts, as the self-join cuts them, spent most of their time in that loop)
      if (scoreEvery || h[t] < most - 1e-9) {
        bestH = -1;
        for (int idx = firstFree; idx < total; idx++) {
          if (taken[idx]) continue;
          double hb = sample.splitEntropy(members.get(idx), group[t], groupSize[t], ones);
          if (hb > bestH + 1e-9) {
            bestH = hb;
            best = idx;
          }
        }
      }
      taken[best] = true;
      int bit = members.get(best);
      tables.get(t).add(bit);
      groupSize[t] = sample.split(bit, group[t], groupSize[t].length);
      h[t] = bestH;
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

  /** Bit columns of up to 8192 evenly spaced codes, for key entropies. */
  private static final class Sample {
    private final long[][] columns;
    private final int size;
    private final double[] plogpOf; // plogp(c / size) for each count c: the same doubles, without a logarithm per group and bit

    Sample(CodeBlock codes, int[] chosen) {
      int n = codes.size();
      size = Math.min(n, 8192);
      plogpOf = new double[size + 1];
      for (int c = 0; c <= size; c++) plogpOf[c] = plogp(c / (double) size);
      columns = new long[chosen.length][(size + 63) >>> 6];
      for (int r = 0; r < size; r++) {
        int i = (int) ((long) r * n / size);
        for (int c = 0; c < chosen.length; c++)
          if (codes.bit(i, chosen[c])) columns[c][r >>> 6] |= 1L << (r & 63);
      }
    }

    /** Entropy of the key (groups refined by bit column c), in bits. */
    double splitEntropy(int c, int[] group, int[] groupSize, int[] ones) {
      if (size == 0) return 0;
      long[] col = columns[c];
      for (int i = 0; i < col.length; i++)
        for (long x = col[i]; x != 0; x &= x - 1) ones[group[(i << 6) + Long.numberOfTrailingZeros(x)]]++;
      double h = 0;
      for (int g = 0; g < groupSize.length; g++) {
        int one = ones[g], zero = groupSize[g] - one;
        h -= plogpOf[one] + plogpOf[zero];
        ones[g] = 0;
      }
      return h;
    }

    /** Entropy of the key made of every column in {@code members}: the most any of their subsets reaches. */
    double fullEntropy(List<Integer> members) {
      int[] group = new int[size], sizes = {size};
      for (int c : members) sizes = split(c, group, sizes.length);
      double h = 0;
      for (int g : sizes) h -= plogp(g / (double) size);
      return size == 0 ? 0 : h;
    }

    /** Refines the groups by bit column c in place; returns the new group sizes. */
    int[] split(int c, int[] group, int groups) {
      int[] id = new int[2 * groups];
      Arrays.fill(id, -1);
      int next = 0;
      long[] col = columns[c];
      for (int r = 0; r < size; r++) {
        int key = 2 * group[r] + (int) (col[r >>> 6] >>> (r & 63) & 1);
        if (id[key] < 0) id[key] = next++;
        group[r] = id[key];
      }
      int[] sizes = new int[next];
      for (int r = 0; r < size; r++) sizes[group[r]]++;
      return sizes;
    }
  }

  private static double plogp(double p) {
    return p <= 0 ? 0 : p * Math.log(p) / Math.log(2);
  }

  static double binaryEntropy(double p) {
    return -(plogp(p) + plogp(1 - p));
  }

  /**
   * How many codes have each bit set. Eight counters of 8 bits share one long ("SIMD within a
   * register", common practice): counter j of word k's lane l counts bit 8j + l, flushed every 255
   * codes before a byte can overflow.
   */
  static long[] bitCounts(CodeBlock codes) {
    int bits = codes.layout().bits(), w = codes.wordsPerCode(), n = codes.size();
    long[] data = codes.words();
    long[] counts = new long[w << 6];
    long[] lanes = new long[w << 3];
    for (int from = 0; from < n; from += 255) {
      int to = Math.min(n, from + 255);
      for (int i = from; i < to; i++)
        for (int k = 0; k < w; k++) {
          long x = data[i * w + k];
          for (int l = 0; l < 8; l++) lanes[(k << 3) + l] += (x >>> l) & 0x0101010101010101L;
        }
      for (int k = 0; k < w; k++)
        for (int l = 0; l < 8; l++) {
          long v = lanes[(k << 3) + l];
          for (int j = 0; j < 8; j++) counts[(k << 6) + (j << 3) + l] += (v >>> (j << 3)) & 0xff;
          lanes[(k << 3) + l] = 0;
        }
    }
    return Arrays.copyOf(counts, bits);
  }
}
