package io.actindex.query;

import io.actindex.core.CodeBlock;

/**
 * Query codes in the index's layout; code {@code i} came from row {@code firstRow + i} of the
 * query file. {@code notes} say how the query file was read (a CSV header decision, ...);
 * {@code columns} are the file's column names (its CSV header) or null.
 */
public record QueryCodes(CodeBlock codes, long firstRow, java.util.List<String> notes, java.util.List<String> columns) {
  public QueryCodes {
    notes = notes == null ? java.util.List.of() : java.util.List.copyOf(notes);
    columns = columns == null ? null : java.util.List.copyOf(columns);
  }

  public QueryCodes(CodeBlock codes, long firstRow) {
    this(codes, firstRow, null, null);
  }

  public int size() {
    return codes.size();
  }

  /** The file row of query {@code i}. */
  public long row(int i) {
    return firstRow + i;
  }
}
