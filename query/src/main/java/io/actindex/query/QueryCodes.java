package io.actindex.query;

import io.actindex.core.CodeBlock;

/**
 * Query codes in the index's layout; code {@code i} came from row {@code firstRow + i} of the
 * query file.
 */
public record QueryCodes(CodeBlock codes, long firstRow) {
  public int size() {
    return codes.size();
  }

  /** The file row of query {@code i}. */
  public long row(int i) {
    return firstRow + i;
  }
}
