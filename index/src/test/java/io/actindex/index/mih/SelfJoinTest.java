package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;

/**
 * {@link SelfJoin} and {@link RadiusMatcher} against an O(n^2) join written here (bit-by-bit
 * distances through {@link CodeBlock#bit}), on uniform and ReLU-like codes with planted exact and
 * near copies, every radius 0..8 and a radius of 20, automatic and forced key sizes (s = 1, 2, 3
 * parts per key), the scan, and 1 or 3 threads; the matcher with forced table counts (substring
 * radius 0, 1, 2...).
 */
class SelfJoinTest {

  /** Codes with planted copies: exact copies, a crowd of identical codes, and copies 1-6 bits away. */
  static CodeBlock planted(CodeBlock base, SplittableRandom rnd) {
    int n = base.size(), w = base.wordsPerCode(), bits = base.layout().bits();
    long[] words = base.words().clone();
    int crowd = rnd.nextInt(n);
    for (int i = 0; i < n / 10; i++) {
      int to = rnd.nextInt(n), from = rnd.nextInt(4) == 0 ? crowd : rnd.nextInt(n);
      System.arraycopy(words, from * w, words, to * w, w);
      int flips = rnd.nextInt(3) == 0 ? 0 : rnd.nextInt(7);
      for (int f = 0; f < flips; f++) {
        int b = rnd.nextInt(bits);
        words[to * w + (b >>> 6)] ^= 1L << (b & 63);
      }
    }
    return new CodeBlock(base.layout(), n, words);
  }

  /** Distances of every pair i < j, computed bit by bit: d[i][j - i - 1]. */
  static int[][] allDistances(CodeBlock c) {
    int n = c.size(), bits = c.layout().bits();
    boolean[][] b = new boolean[n][bits];
    for (int i = 0; i < n; i++) for (int k = 0; k < bits; k++) b[i][k] = c.bit(i, k);
    int[][] d = new int[n][];
    for (int i = 0; i < n; i++) {
      d[i] = new int[n - i - 1];
      for (int j = i + 1; j < n; j++) {
        int x = 0;
        for (int k = 0; k < bits; k++) if (b[i][k] != b[j][k]) x++;
        d[i][j - i - 1] = x;
      }
    }
    return d;
  }

  static long[] bruteForce(int[][] d, int radius) {
    List<Long> out = new ArrayList<>();
    for (int i = 0; i < d.length; i++)
      for (int j = i + 1; j < d.length; j++)
        if (d[i][j - i - 1] <= radius) out.add(pack(i, j, d[i][j - i - 1]));
    return out.stream().mapToLong(Long::longValue).toArray();
  }

  static long pack(int a, int b, int d) {
    return (long) a << 40 | (long) b << 12 | d;
  }

  static long[] joined(SelfJoin j, int threads) {
    List<Long> out = new ArrayList<>();
    j.forEachPair(threads, (a, b, d) -> {
      assertTrue(a < b);
      out.add(pack(a, b, d));
    }, null, null);
    return out.stream().mapToLong(Long::longValue).sorted().toArray();
  }

  /** Join variants: automatic; 1, 2 or 3 parts per key through the tables; the scan. */
  record JoinPlan(int keyParts, SearchPlanOptions.Strategy strategy) {
    SelfJoin build(CodeBlock codes, int radius) {
      return SelfJoin.build(codes, radius, keyParts, strategy);
    }
  }

  static JoinPlan joinPlan(int variant, SplittableRandom rnd) {
    return switch (variant % 4) {
      case 0 -> new JoinPlan(0, SearchPlanOptions.Strategy.AUTO);
      case 1 -> new JoinPlan(1, SearchPlanOptions.Strategy.TABLES);
      case 2 -> new JoinPlan(2 + rnd.nextInt(2), SearchPlanOptions.Strategy.TABLES);
      default -> new JoinPlan(0, SearchPlanOptions.Strategy.SCAN);
    };
  }

  /**
   * Matcher plan variants: automatic; forced tables of about 8-12 bits (so a radius above m probes
   * neighbouring buckets, rho >= 1, at a bearable number of flips); plain tables; the scan.
   */
  static SearchPlanOptions options(int variant, int bits, SplittableRandom rnd) {
    SearchPlanOptions d = SearchPlanOptions.defaults();
    return switch (variant % 4) {
      case 0 -> d;
      case 1 -> d.withStrategy(SearchPlanOptions.Strategy.TABLES).withSubstrings((bits + 7 + rnd.nextInt(5)) / (8 + rnd.nextInt(5)));
      case 2 -> d.plain().withStrategy(SearchPlanOptions.Strategy.TABLES);
      default -> d.withStrategy(SearchPlanOptions.Strategy.SCAN);
    };
  }

  @Test
  @Tag("slow")
  void pairsEqualBruteForce() {
    for (int rep = 0; rep < 8; rep++) {
      long seed = Randoms.seed(rep);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = 600 + rnd.nextInt(1400);
      CodeBlock base = rep % 2 == 0
          ? SyntheticCodes.uniform(n, 24 + rnd.nextInt(200), seed)
          : SyntheticCodes.reluLike(n, 16 + rnd.nextInt(100), 8 + rnd.nextInt(60), seed).codes();
      CodeBlock codes = planted(base, rnd);
      int[][] d = allDistances(codes);
      for (int variant = 0; variant < 4; variant++) {
        JoinPlan o = joinPlan(variant, rnd);
        for (int radius : new int[] {0, 1, 2, 3, 4, 5, 6, 7, 8, 20}) check(codes, d, radius, o, rnd, why + " variant " + variant + " " + o);
      }
    }
  }

  private static void check(CodeBlock codes, int[][] d, int radius, JoinPlan o, SplittableRandom rnd, String why) {
    SelfJoin j = o.build(codes, radius);
    String at = why + " R=" + radius + " tables=" + j.tables() + " s=" + j.keyParts() + " scan=" + j.scans();
    long[] want = bruteForce(d, radius);
    assertArrayEquals(want, joined(j, 1 + 2 * rnd.nextInt(2)), at);
    // distinct pairs expand to the same count; same order whatever the thread count; the forced
    // table plans really run through tables when the codes have the bits for them
    if (o.strategy() == SearchPlanOptions.Strategy.TABLES && radius > 0 && !j.scans()) assertEquals(o.keyParts(), j.keyParts(), at);
    long[] count = {j.distinct().identicalPairs()};
    List<Long> one = new ArrayList<>(), three = new ArrayList<>();
    j.forEachPair(1, (a, b, dist) -> one.add(pack(a, b, dist)), (u, v, dist) -> one.add(-pack(u, v, dist)), null);
    j.forEachPair(3, (a, b, dist) -> three.add(pack(a, b, dist)), (u, v, dist) -> three.add(-pack(u, v, dist)), null);
    assertEquals(one, three, at);
    j.forEachDistinctPair(2, (u, v, dist) -> {
      assertTrue(u < v, at);
      count[0] += (long) j.distinct().holders(u) * j.distinct().holders(v);
    }, null);
    assertEquals(want.length, count[0], at);
  }

  /**
   * Several partitions per table and the table filled by several threads (n above 4,096 distinct
   * codes), against an O(n^2) join over whole words written here; every key size, 1 and 3 threads.
   */
  @Test
  @Tag("slow")
  void partitionedTablesEqualWordByWordJoin() {
    for (int rep = 0; rep < 4; rep++) {
      long seed = Randoms.seed(200 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = 9_000 + rnd.nextInt(4_000);
      CodeBlock codes = planted(rep % 2 == 0 ? SyntheticCodes.reluLike(n, 60 + rnd.nextInt(60), 40 + rnd.nextInt(40), seed).codes()
          : SyntheticCodes.uniform(n, 64 + rnd.nextInt(100), seed), rnd);
      int w = codes.wordsPerCode();
      long[] data = codes.words();
      for (int radius : new int[] {2, 4}) {
        List<Long> want = new ArrayList<>();
        for (int i = 0; i < n; i++)
          for (int j = i + 1; j < n; j++) {
            int d = 0;
            for (int k = 0; k < w; k++) d += Long.bitCount(data[i * w + k] ^ data[j * w + k]);
            if (d <= radius) want.add(pack(i, j, d));
          }
        for (int keyParts = 0; keyParts <= 3; keyParts++) {
          SelfJoin j = SelfJoin.build(codes, radius, keyParts, keyParts == 0 ? SearchPlanOptions.Strategy.AUTO : SearchPlanOptions.Strategy.TABLES);
          String at = Randoms.describe(seed) + " n=" + n + " R=" + radius + " s=" + j.keyParts() + " tables=" + j.tables() + " scan=" + j.scans();
          for (int threads : new int[] {1, 3}) {
            long[] got = joined(j, threads);
            assertArrayEquals(want.stream().mapToLong(Long::longValue).toArray(), got, at + " threads=" + threads);
          }
        }
      }
    }
  }

  @Test
  void matchesEqualPerRowRadiusSearch() {
    for (int rep = 0; rep < 12; rep++) {
      long seed = Randoms.seed(100 + rep);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      int n = 300 + rnd.nextInt(700);
      CodeBlock codes = planted(rep % 2 == 0 ? SyntheticCodes.uniform(n, 30 + rnd.nextInt(150), seed)
          : SyntheticCodes.reluLike(n, 20 + rnd.nextInt(50), 10 + rnd.nextInt(30), seed).codes(), rnd);
      int bits = codes.layout().bits(), q = 200;
      long[] qw = new long[q * codes.wordsPerCode()];
      for (int i = 0; i < q; i++) {
        long[] c = codes.code(rnd.nextInt(n));
        int flips = rnd.nextInt(6) == 0 ? bits : rnd.nextInt(8);
        for (int f = 0; f < flips; f++) {
          int b = rnd.nextInt(bits);
          c[b >>> 6] ^= 1L << (b & 63);
        }
        System.arraycopy(c, 0, qw, i * c.length, c.length);
      }
      CodeBlock queries = new CodeBlock(codes.layout(), q, qw);
      for (int radius : new int[] {0, 1, 3, 6, 11}) {
        RadiusMatcher j = RadiusMatcher.build(codes, radius, options(rep + radius, bits, rnd));
        List<Long> got = new ArrayList<>(), want = new ArrayList<>();
        j.forEachMatch(queries, 1 + rnd.nextInt(3), (row, ord, dist) -> got.add(pack(row, ord, dist)), null);
        for (int i = 0; i < q; i++)
          for (int o = 0; o < n; o++) {
            int x = 0;
            for (int b = 0; b < bits; b++) if (queries.bit(i, b) != codes.bit(o, b)) x++;
            if (x <= radius) want.add(pack(i, o, x));
          }
        assertEquals(want, got, why + " R=" + radius + " m=" + j.tables());
      }
    }
  }

  @Test
  void tenThousandIdenticalCodesStreamAllPairs() {
    int n = 10_000;
    CodeLayout layout = CodeLayout.single("bits", 256);
    long[] words = new long[n * 4];
    for (int i = 0; i < n; i++) {
      words[i * 4] = 0x0123456789ABCDEFL;
      words[i * 4 + 3] = 42;
    }
    SelfJoin j = SelfJoin.build(new CodeBlock(layout, n, words), 3);
    long[] count = {0, -1, 0};
    j.forEachPair(2, (a, b, d) -> {
      // one distinct code: its holders' pairs arrive in ascending (a, b), none kept
      long key = (long) a * n + b;
      if (key <= count[1] || d != 0) count[2]++;
      count[1] = key;
      count[0]++;
    }, null, null);
    assertEquals(49_995_000L, count[0]); // C(10000, 2)
    assertEquals(0, count[2], "pairs out of order or at a distance other than 0");
    assertEquals(49_995_000L, j.distinct().identicalPairs());
  }
}
