package io.actindex.core;

import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;

/**
 * Layouts and masks for masked-search tests: the same codes cut into several layers at random
 * boundaries (on 64-bit words or not), and masks of one layer, several layers, every layer, any
 * bits, whole words (ghost bits included), or whole layers plus a few stray bits.
 */
public final class LayerMasks {
  private LayerMasks() {}

  /** The same codes under a layout of 1 to 5 layers cut at random bits (half the time at word boundaries). */
  public static CodeBlock cut(CodeBlock codes, SplittableRandom rnd) {
    int bits = codes.layout().bits(), layers = 1 + rnd.nextInt(Math.min(5, bits));
    boolean onWords = bits >= 128 && rnd.nextBoolean();
    List<CodeLayout.Segment> segs = new ArrayList<>();
    int[] cuts = (onWords ? rnd.ints(4L * layers, 0, bits >>> 6).map(x -> x << 6) : rnd.ints(4L * layers, 0, bits))
        .distinct().limit(layers - 1L).sorted().toArray();
    int from = 0;
    for (int c : cuts) {
      if (c == 0) continue;
      segs.add(new CodeLayout.Segment("l" + segs.size(), c - from));
      from = c;
    }
    segs.add(new CodeLayout.Segment("l" + segs.size(), bits - from));
    return new CodeBlock(new CodeLayout(segs), codes.size(), codes.words());
  }

  /** One of: one layer, a random set of layers, every layer, random bits, whole layers plus stray bits. */
  public static long[] mask(CodeLayout layout, SplittableRandom rnd) {
    int layers = layout.segments().size();
    long[] m = switch (rnd.nextInt(6)) {
      case 0 -> layout.mask(rnd.nextInt(layers));
      case 1 -> layout.mask(rnd.ints(0, layers).limit(1 + rnd.nextInt(layers)).distinct().toArray());
      case 2 -> layout.fullMask();
      case 3 -> {
        long[] r = new long[layout.words()];
        for (int j = 0; j < r.length; j++) r[j] = rnd.nextInt(3) == 0 ? -1L : rnd.nextLong();
        yield r;
      }
      case 4 -> {
        long[] r = new long[layout.words()];
        for (int j = 0; j < r.length; j++) r[j] = rnd.nextBoolean() ? -1L : 0L;
        yield r;
      }
      default -> {
        long[] r = layout.mask(rnd.nextInt(layers));
        for (int f = 1 + rnd.nextInt(4); f > 0; f--) {
          int b = rnd.nextInt(layout.bits());
          r[b >>> 6] |= 1L << (b & 63);
        }
        yield r;
      }
    };
    return m;
  }

  /** A short description for failure messages. */
  public static String describe(long[] mask) {
    StringBuilder sb = new StringBuilder("mask=");
    for (long x : mask) sb.append(Long.toHexString(x)).append(' ');
    return sb.toString().trim();
  }
}
