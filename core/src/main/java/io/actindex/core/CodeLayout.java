package io.actindex.core;

import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.zip.CRC32C;

/**
 * The shape of one code: ordered named segments (one per hidden layer, usually), their widths in
 * bits, the total width {@code bits} and the number of 64-bit words per code {@code words}.
 *
 * <p>Bit {@code i} of a code lives in word {@code i >>> 6} at bit position {@code i & 63}
 * (little-endian within the word). Segment {@code s} covers bits {@code [start(s), start(s) + width)}.
 * Bits at or beyond {@code bits} in the last word are always zero ("ghost bits").
 *
 * <p>Immutable and thread-safe.
 */
public record CodeLayout(List<Segment> segments) {

  /** One named run of bits, e.g. a hidden layer of {@code bits} neurons. */
  public record Segment(String name, int bits) {
    public Segment {
      if (name == null || name.isBlank()) throw new IllegalArgumentException("segment name is empty");
      if (name.contains(",") || name.contains(":") || name.chars().anyMatch(Character::isWhitespace))
        throw new IllegalArgumentException("segment name '" + name + "' may not contain ',', ':' or spaces");
      if (bits <= 0) throw new IllegalArgumentException("segment '" + name + "' has " + bits + " bits; needs at least 1");
    }
  }

  public CodeLayout {
    segments = List.copyOf(segments);
    if (segments.isEmpty()) throw new IllegalArgumentException("a code layout needs at least one segment");
    long total = 0;
    for (Segment s : segments) total += s.bits();
    if (total > Integer.MAX_VALUE / 2) throw new IllegalArgumentException("code too long: " + total + " bits");
    for (int i = 0; i < segments.size(); i++)
      for (int j = i + 1; j < segments.size(); j++)
        if (Names.same(segments.get(i).name(), segments.get(j).name())) // one name in two Unicode forms is one name
          throw new IllegalArgumentException("segment name '" + segments.get(i).name() + "' appears twice"
              + (segments.get(i).name().equals(segments.get(j).name()) ? "" : " (written in two Unicode forms)"));
  }

  /** A layout of one segment named {@code name}. */
  public static CodeLayout single(String name, int bits) {
    return new CodeLayout(List.of(new Segment(name, bits)));
  }

  /**
   * Parses {@code "name:bits,name:bits"}, the form {@link #toString()} writes. An empty segment is
   * refused wherever it stands ({@code split}'s default dropped a trailing one: {@code "a:40,"}).
   */
  public static CodeLayout parse(String spec) {
    return parse(spec, false);
  }

  /**
   * As {@link #parse}, for a layout a user typed ({@code --code-layout}): each name in Unicode NFC
   * ({@link Names}), as names read from users' files are. {@link #parse} keeps a stored layout's
   * names as written, since its {@link #hash} is in file headers.
   */
  public static CodeLayout parseTyped(String spec) {
    return parse(spec, true);
  }

  private static CodeLayout parse(String spec, boolean nfc) {
    List<Segment> segs = new ArrayList<>();
    for (String part : spec.split(",", -1)) {
      int colon = part.lastIndexOf(':');
      if (colon < 0) throw new IllegalArgumentException("layout segment '" + part + "' is not name:bits");
      String name = part.substring(0, colon).trim();
      try {
        segs.add(new Segment(nfc ? Names.nfc(name) : name, Integer.parseInt(part.substring(colon + 1).trim())));
      } catch (NumberFormatException e) {
        throw new IllegalArgumentException("layout segment '" + part + "' has no integer bit count");
      }
    }
    return new CodeLayout(segs);
  }

  /** Total number of bits in a code. */
  public int bits() {
    int total = 0;
    for (Segment s : segments) total += s.bits();
    return total;
  }

  /** 64-bit words per code: {@code ceil(bits / 64)}. */
  public int words() {
    return (bits() + 63) >>> 6;
  }

  /** Index of the segment named {@code name}, or -1; a name in another Unicode normal form is the same name ({@link Names}). */
  public int indexOf(String name) {
    for (int i = 0; i < segments.size(); i++) if (segments.get(i).name().equals(name)) return i;
    for (int i = 0; i < segments.size(); i++) if (Names.same(segments.get(i).name(), name)) return i;
    return -1;
  }

  /** First bit of segment {@code s}. */
  public int start(int s) {
    int start = 0;
    for (int i = 0; i < s; i++) start += segments.get(i).bits();
    return start;
  }

  /** A mask of {@link #words()} words with the bits of the given segments set. */
  public long[] mask(int... segmentIndexes) {
    long[] mask = new long[words()];
    for (int s : segmentIndexes) {
      int from = start(s), to = from + segments.get(s).bits();
      for (int b = from; b < to; b++) mask[b >>> 6] |= 1L << (b & 63);
    }
    return mask;
  }

  /** A mask of all {@link #bits()} bits. */
  public long[] fullMask() {
    int[] all = new int[segments.size()];
    for (int i = 0; i < all.length; i++) all[i] = i;
    return mask(all);
  }

  /** A stable 32-bit hash of the layout, written into file headers to catch mismatched files. */
  public int hash() {
    CRC32C crc = new CRC32C();
    crc.update(toString().getBytes(StandardCharsets.UTF_8));
    return (int) crc.getValue();
  }

  /** The layout as {@code "name:bits,name:bits"}. */
  @Override
  public String toString() {
    StringBuilder sb = new StringBuilder();
    for (Segment s : segments) {
      if (!sb.isEmpty()) sb.append(',');
      sb.append(s.name()).append(':').append(s.bits());
    }
    return sb.toString();
  }
}
