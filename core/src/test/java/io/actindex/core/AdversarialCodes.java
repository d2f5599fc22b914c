package io.actindex.core;

import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;

/**
 * Code sets, layouts, queries, masks and filters chosen to break search paths rather than to look
 * like data: odd widths around word boundaries, layouts of several layers, every code identical,
 * a few distinct codes copied many times (ties at every distance), half the bits constant (the
 * planner's estimates off), all codes in one tight cluster, sparse codes; queries with bits set
 * past the width; empty, one-bit, one-layer and whole-layout masks.
 */
public final class AdversarialCodes {
  private AdversarialCodes() {}

  /** Widths around word boundaries and a few long ones. */
  public static final int[] WIDTHS = {1, 2, 63, 64, 65, 127, 129, 191, 193, 255, 257, 300, 511, 513, 1000, 1024};

  /** Families of code sets, see {@link #codes}. */
  public static final String[] FAMILIES = {"uniform", "identical", "fewDistinct", "halfConstant", "oneCluster", "sparse"};

  /** A layout of {@code bits} bits cut into 1-4 layers at random places (each at least 1 bit). */
  public static CodeLayout layout(int bits, SplittableRandom rnd) {
    int layers = Math.min(bits, 1 + rnd.nextInt(4));
    List<Integer> cuts = new ArrayList<>();
    while (cuts.size() < layers - 1) {
      int c = 1 + rnd.nextInt(bits - 1);
      if (!cuts.contains(c)) cuts.add(c);
    }
    cuts.sort(null);
    List<CodeLayout.Segment> segs = new ArrayList<>();
    int from = 0;
    for (int i = 0; i <= cuts.size(); i++) {
      int to = i < cuts.size() ? cuts.get(i) : bits;
      segs.add(new CodeLayout.Segment("l" + i, to - from));
      from = to;
    }
    return new CodeLayout(segs);
  }

  /** {@code n} codes of {@code family} over {@code layout}. */
  public static CodeBlock codes(String family, CodeLayout layout, int n, SplittableRandom rnd) {
    int bits = layout.bits(), w = layout.words();
    long[] words = new long[n * w];
    long[] base = random(bits, rnd);
    long[] constMask = random(bits, rnd); // halfConstant: these bits copy base in every code
    long[][] distinct = new long[1 + rnd.nextInt(4)][];
    for (int i = 0; i < distinct.length; i++) distinct[i] = random(bits, rnd);
    for (int i = 0; i < n; i++) {
      long[] c = switch (family) {
        case "uniform" -> random(bits, rnd);
        case "identical" -> base.clone();
        case "fewDistinct" -> distinct[rnd.nextInt(distinct.length)].clone();
        case "halfConstant" -> {
          long[] r = random(bits, rnd);
          for (int j = 0; j < w; j++) r[j] = r[j] & ~constMask[j] | base[j] & constMask[j];
          yield r;
        }
        case "oneCluster" -> flip(base.clone(), rnd.nextInt(3), bits, rnd);
        case "sparse" -> {
          long[] r = new long[w];
          for (int b = 0; b < bits; b++) if (rnd.nextInt(20) == 0) r[b >>> 6] |= 1L << (b & 63);
          yield r;
        }
        default -> throw new IllegalArgumentException(family);
      };
      System.arraycopy(c, 0, words, i * w, w);
    }
    return new CodeBlock(layout, n, words);
  }

  /** A random code of {@code bits} bits (ghost bits zero). */
  public static long[] random(int bits, SplittableRandom rnd) {
    int w = (bits + 63) >>> 6;
    long[] r = new long[w];
    for (int j = 0; j < w; j++) r[j] = rnd.nextLong();
    if ((bits & 63) != 0) r[w - 1] &= -1L >>> (64 - (bits & 63));
    return r;
  }

  /** {@code code} with {@code flips} random bits (below {@code bits}) flipped, in place. */
  public static long[] flip(long[] code, int flips, int bits, SplittableRandom rnd) {
    for (int i = 0; i < flips; i++) {
      int b = rnd.nextInt(bits);
      code[b >>> 6] ^= 1L << (b & 63);
    }
    return code;
  }

  /**
   * A query: a stored code (or a few bits from one), its complement, or a random code; in a third
   * of the cases with random bits set past the width (which must not count).
   */
  public static long[] query(CodeBlock codes, SplittableRandom rnd) {
    int bits = codes.layout().bits(), w = codes.wordsPerCode(), n = codes.size();
    long[] q = switch (n == 0 ? 3 : rnd.nextInt(4)) {
      case 0 -> codes.code(rnd.nextInt(n));
      case 1 -> flip(codes.code(rnd.nextInt(n)), 1 + rnd.nextInt(4), bits, rnd);
      case 2 -> {
        long[] c = codes.code(rnd.nextInt(n));
        for (int j = 0; j < w; j++) c[j] = ~c[j];
        yield c;
      }
      default -> random(bits, rnd);
    };
    long ghost = CodeBlock.ghostMask(codes.layout());
    if (rnd.nextInt(3) == 0) q[w - 1] |= rnd.nextLong() & ghost;
    else q[w - 1] &= ~ghost;
    return q;
  }

  /** Mask kinds of {@link #mask}. */
  public static final String[] MASKS = {"none", "zero", "oneBit", "whole", "layer", "layerPlusGhost", "random", "ghostOnly"};

  /** A mask of the given kind over {@code layout} (null for "none"). */
  public static long[] mask(String kind, CodeLayout layout, SplittableRandom rnd) {
    int w = layout.words(), bits = layout.bits();
    long ghost = CodeBlock.ghostMask(layout);
    return switch (kind) {
      case "none" -> null;
      case "zero" -> new long[w];
      case "oneBit" -> {
        long[] m = new long[w];
        int b = rnd.nextInt(bits);
        m[b >>> 6] |= 1L << (b & 63);
        yield m;
      }
      case "whole" -> layout.fullMask();
      case "layer" -> layout.mask(rnd.nextInt(layout.segments().size()));
      case "layerPlusGhost" -> {
        long[] m = layout.mask(rnd.nextInt(layout.segments().size()));
        m[w - 1] |= ghost;
        yield m;
      }
      case "random" -> {
        long[] m = new long[w];
        for (int j = 0; j < w; j++) m[j] = rnd.nextLong();
        yield m;
      }
      case "ghostOnly" -> {
        long[] m = new long[w];
        m[w - 1] = ghost;
        yield m;
      }
      default -> throw new IllegalArgumentException(kind);
    };
  }

  /** Filter kinds of {@link #filter}. */
  public static final String[] FILTERS = {"none", "empty", "one", "all", "sparse", "half", "predicate"};

  /** A filter over {@code [0, n)} of the given kind (null for "none"; an {@link IdSet} but for "predicate"). */
  public static java.util.function.IntPredicate filter(String kind, int n, SplittableRandom rnd) {
    return switch (kind) {
      case "none" -> null;
      case "empty" -> IdSet.of(n);
      case "one" -> n == 0 ? IdSet.of(0) : IdSet.of(n, rnd.nextInt(n));
      case "all" -> IdSet.all(n);
      case "sparse", "half" -> {
        double keep = kind.equals("sparse") ? 0.02 : 0.5;
        long[] words = new long[(n + 63) >>> 6];
        for (int i = 0; i < n; i++) if (rnd.nextDouble() < keep) words[i >>> 6] |= 1L << (i & 63);
        yield IdSet.of(words, n);
      }
      case "predicate" -> {
        int mod = 2 + rnd.nextInt(3);
        yield new java.util.function.IntPredicate() {
          @Override
          public boolean test(int i) {
            return i % mod != 0;
          }

          @Override
          public String toString() {
            return "ord % " + mod + " != 0";
          }
        };
      }
      default -> throw new IllegalArgumentException(kind);
    };
  }

  /**
   * One query under one mask and one filter; {@link #unchanged} tells whether a search changed the
   * caller's query or mask (it must not).
   */
  public record Case(long[] query, String maskKind, long[] mask, String filterKind, java.util.function.IntPredicate accept,
      long[] queryBefore, long[] maskBefore) {
    public boolean unchanged() {
      return java.util.Arrays.equals(query, queryBefore) && java.util.Arrays.equals(mask, maskBefore);
    }

    @Override
    public String toString() {
      return "mask=" + maskKind + " filter=" + filterKind;
    }
  }

  /** For each of {@code queries} queries of {@link #query}, one case per mask kind, each with a filter of a random kind. */
  public static List<Case> cases(CodeBlock codes, int queries, SplittableRandom rnd) {
    List<Case> out = new ArrayList<>();
    for (int qi = 0; qi < queries; qi++) {
      long[] q = query(codes, rnd);
      for (String maskKind : MASKS) {
        long[] mask = mask(maskKind, codes.layout(), rnd);
        String filterKind = FILTERS[rnd.nextInt(FILTERS.length)];
        out.add(new Case(q, maskKind, mask, filterKind, filter(filterKind, codes.size(), rnd), q.clone(), mask == null ? null : mask.clone()));
      }
    }
    return out;
  }

  /** k values that stress the edges for {@code n} codes. */
  public static int[] ks(int n, SplittableRandom rnd) {
    return new int[] {-3, 0, 1, 2, Math.max(1, n - 1), Math.max(1, n), n + 1, 1 + rnd.nextInt(Math.max(1, n) + 10), Integer.MAX_VALUE};
  }
}
