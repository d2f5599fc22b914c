package io.actindex.index.mih;

import java.util.List;

/**
 * What a searcher built by {@link Searchers} holds: its bit plan, its tables and their bucket
 * occupancy, and its memory.
 *
 * @param size codes indexed
 * @param bits bits per code
 * @param constantBits bits constant over the indexed codes, left out of the tables
 * @param indexedBits bits the tables key on; fewer than {@code bits - constantBits} means the
 *     lower-bound cascade (the other bits are only checked on the full codes)
 * @param tables one entry per substring table, in probe order (empty: every query scans)
 * @param tableBytes memory of the tables (ids, offsets, keys) and of the cluster partition, as built
 * @param codeBytes memory of the codes themselves
 * @param onDemandBytes memory the partition builds on first use and may then hold, at most: each
 *     code's cluster and radius for filtered queries (4 bytes per code) and radii for masked
 *     queries (per set of layers, up to 8 sets); counted from the partition's size, whether or not
 *     a query has built them yet; 0 without a partition
 */
public record SearcherStats(int size, int bits, int constantBits, int indexedBits, List<Table> tables, long tableBytes,
    long codeBytes, long onDemandBytes) {

  public SearcherStats {
    tables = List.copyOf(tables);
  }

  /**
   * One substring table.
   *
   * @param width bits in the substring
   * @param dense one bucket per possible key (else sorted non-empty keys)
   * @param nonEmptyBuckets buckets holding at least one code
   * @param maxBucket codes in the fullest bucket
   * @param meanCollisions sum of squared bucket sizes over n: how many codes share the bucket of
   *     an average indexed code, i.e. what an in-distribution query meets per exact-key probe
   * @param keyEntropy entropy of the key over the indexed codes, in bits (at most {@code width})
   * @param bytes memory of this table
   */
  public record Table(
      int width, boolean dense, long nonEmptyBuckets, int maxBucket, double meanCollisions, double keyEntropy, long bytes) {}

  /** Number of substrings (tables). */
  public int substrings() {
    return tables.size();
  }

  /** True when the tables cover only part of the non-constant bits (the lower-bound cascade). */
  public boolean cascade() {
    return indexedBits < bits - constantBits;
  }

  /** Mean over tables of {@link Table#meanCollisions()}; 0 without tables. */
  public double meanCollisions() {
    return tables.stream().mapToDouble(Table::meanCollisions).average().orElse(0);
  }

  /** Largest bucket over all tables. */
  public int maxBucket() {
    return tables.stream().mapToInt(Table::maxBucket).max().orElse(0);
  }

  /** Smallest key entropy over the tables, in bits (the weakest substring); 0 without tables. */
  public double minKeyEntropy() {
    return tables.stream().mapToDouble(Table::keyEntropy).min().orElse(0);
  }

  /** Memory per indexed code, tables and codes together. */
  public double bytesPerCode() {
    return size == 0 ? 0 : (tableBytes + codeBytes) / (double) size;
  }

  @Override
  public String toString() {
    return String.format(
        "%d codes x %d bits: %d constant, %d indexed in %d tables%s; mean collisions %.1f, max bucket %d,"
            + " min key entropy %.1f bits; %.1f bytes/code",
        size, bits, constantBits, indexedBits, tables.size(), cascade() ? " (cascade)" : "",
        meanCollisions(), maxBucket(), minKeyEntropy(), bytesPerCode());
  }
}
