package io.actindex.cli.format;

/** The output formats of the query commands. */
public enum Format {
  /** Aligned text for a terminal. */
  table,
  /** One JSON document on stdout. */
  json,
  /** Comma-separated values with a header line, one row per result line. */
  csv
}
