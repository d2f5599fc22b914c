package io.actindex.core;

import java.util.Arrays;

/**
 * {@code n} codes of one {@link CodeLayout}, packed row-major into one {@code long[]} of
 * {@code n * words} words: code {@code i} occupies words {@code [i*words, (i+1)*words)}.
 *
 * <p>Ghost bits (at or beyond {@code layout.bits()} in a code's last word) are zero; the
 * constructor checks this. Immutable by convention: {@link #words()} hands out the backing array
 * for speed ("expert"), and callers must not change it.
 */
public final class CodeBlock {
  private final CodeLayout layout;
  private final int n;
  private final int w;
  private final long[] words;

  public CodeBlock(CodeLayout layout, int n, long[] words) {
    this.layout = layout;
    this.n = n;
    this.w = layout.words();
    if (n < 0) throw new IllegalArgumentException("negative code count " + n);
    if ((long) n * w != words.length)
      throw new IllegalArgumentException(
          "code block of " + n + " codes x " + w + " words needs " + ((long) n * w) + " words, got " + words.length);
    this.words = words;
    long ghost = ghostMask(layout);
    if (ghost != 0)
      for (int i = 0; i < n; i++)
        if ((words[i * w + w - 1] & ghost) != 0)
          throw new IllegalArgumentException("code " + i + " has bits set beyond its " + layout.bits() + " bits");
  }

  /** Bits of the last word that lie beyond the layout's width (0 when bits is a multiple of 64). */
  public static long ghostMask(CodeLayout layout) {
    int rem = layout.bits() & 63;
    return rem == 0 ? 0L : -1L << rem;
  }

  /** Packs {@code n x bits} booleans (row-major) into a block. */
  public static CodeBlock fromBits(CodeLayout layout, boolean[][] rows) {
    int w = layout.words(), bits = layout.bits();
    long[] out = new long[rows.length * w];
    for (int i = 0; i < rows.length; i++) {
      if (rows[i].length != bits)
        throw new IllegalArgumentException("row " + i + " has " + rows[i].length + " bits, layout has " + bits);
      for (int b = 0; b < bits; b++) if (rows[i][b]) out[i * w + (b >>> 6)] |= 1L << (b & 63);
    }
    return new CodeBlock(layout, rows.length, out);
  }

  public CodeLayout layout() {
    return layout;
  }

  public int size() {
    return n;
  }

  /** Words per code. */
  public int wordsPerCode() {
    return w;
  }

  /** The backing array (expert: do not modify). */
  public long[] words() {
    return words;
  }

  /** A copy of code {@code i}. */
  public long[] code(int i) {
    return Arrays.copyOfRange(words, i * w, (i + 1) * w);
  }

  /** Bit {@code b} of code {@code i}. */
  public boolean bit(int i, int b) {
    return (words[i * w + (b >>> 6)] >>> (b & 63) & 1L) != 0;
  }

  /** Codes {@code [from, to)} as a new block. */
  public CodeBlock slice(int from, int to) {
    return new CodeBlock(layout, to - from, Arrays.copyOfRange(words, from * w, to * w));
  }

  /** This block followed by {@code other}; layouts must be equal. */
  public CodeBlock concat(CodeBlock other) {
    if (!layout.equals(other.layout))
      throw new IllegalArgumentException("layouts differ: " + layout + " vs " + other.layout);
    long[] out = Arrays.copyOf(words, words.length + other.words.length);
    System.arraycopy(other.words, 0, out, words.length, other.words.length);
    return new CodeBlock(layout, n + other.n, out);
  }
}
