package io.actindex.index.mih;

import io.actindex.core.BadParameterException;

/**
 * How {@link Searchers#build} lays out its hash tables. The defaults suit most data; tests and
 * benchmarks override them to force one search path.
 *
 * @param substrings number of substrings (hash tables); 0 = automatic, about {@code L / log2(n)}
 *     over the non-constant bits, capped by {@code maxSubstrings}
 * @param maxSubstrings cap on the automatic number of substrings; when the cap binds, only the
 *     highest-entropy bits are indexed and the rest are checked on the full codes (the lower-bound
 *     cascade for long codes)
 * @param dropConstantBits leave bits that are constant over the indexed codes out of the tables
 *     (their per-query contribution is added back exactly)
 * @param balance assign bits to substrings so that their entropies are balanced (greedy by per-bit
 *     entropy, correlated bits spread apart); false = consecutive bits in code order
 * @param partition also group the codes around centres for cluster pruning ({@link Partition}),
 *     when the block has at least 4,096 codes (any size under strategy PARTITION)
 * @param strategy AUTO lets the planner choose per query; TABLES always probes the tables; SCAN
 *     always scans; PARTITION always uses the cluster partition for k-NN (when it has one, masked
 *     or not; else the scan)
 */
public record SearchPlanOptions(
    int substrings, int maxSubstrings, boolean dropConstantBits, boolean balance, boolean partition, Strategy strategy) {

  /** The search path a query takes. */
  public enum Strategy {
    AUTO,
    TABLES,
    SCAN,
    PARTITION
  }

  /** Widest substring a table may key on. */
  public static final int MAX_SUBSTRING_BITS = 32;

  public SearchPlanOptions {
    if (substrings < 0) throw new BadParameterException("substrings", " must be 0 (automatic) or more, got " + substrings);
    if (maxSubstrings < 1) throw new BadParameterException("maxSubstrings", " must be at least 1, got " + maxSubstrings);
    if (strategy == null) throw new IllegalArgumentException("strategy is null");
  }

  /** Automatic substrings (at most 16 tables), constant bits dropped, entropy balanced, a partition, planner on. */
  public static SearchPlanOptions defaults() {
    return new SearchPlanOptions(0, 16, true, true, true, Strategy.AUTO);
  }

  public SearchPlanOptions withPartition(boolean p) {
    return new SearchPlanOptions(substrings, maxSubstrings, dropConstantBits, balance, p, strategy);
  }

  public SearchPlanOptions withSubstrings(int m) {
    return new SearchPlanOptions(m, maxSubstrings, dropConstantBits, balance, partition, strategy);
  }

  public SearchPlanOptions withMaxSubstrings(int max) {
    return new SearchPlanOptions(substrings, max, dropConstantBits, balance, partition, strategy);
  }

  public SearchPlanOptions withStrategy(Strategy s) {
    return new SearchPlanOptions(substrings, maxSubstrings, dropConstantBits, balance, partition, s);
  }

  /** The layout before skew handling: no constant-bit dropping, consecutive bits per substring. */
  public SearchPlanOptions plain() {
    return new SearchPlanOptions(substrings, maxSubstrings, false, false, partition, strategy);
  }
}
