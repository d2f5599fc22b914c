package io.actindex.edge;

import java.io.IOException;

/** A bundle file that is damaged, truncated, of another version or not a bundle; the message names the file and field. */
public final class EdgeFormatException extends IOException {
  private static final long serialVersionUID = 1L;

  public EdgeFormatException(String message) {
    super(message);
  }
}
