package io.actindex.index.meta;

import io.actindex.core.BadInputException;

/**
 * A metadata row refused by the index (a key already taken, a value that does not fit its column's
 * kind): {@code row} counts from 0 in the batch, {@code detail} says what is wrong, so that a caller
 * that read the rows from a file can name the file and its data row.
 */
public final class RowRefusal extends BadInputException {
  private final int row;
  private final String detail;

  RowRefusal(int row, String detail) {
    super("metadata row " + row + ": " + detail);
    this.row = row;
    this.detail = detail;
  }

  public int row() {
    return row;
  }

  public String detail() {
    return detail;
  }
}
