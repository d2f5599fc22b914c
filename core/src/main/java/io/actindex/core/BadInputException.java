package io.actindex.core;

/**
 * Input that actindex refuses: a malformed or damaged file, a wrong shape, a NaN, a layout that
 * does not match. The message names the file and the row, column or field at fault. The command
 * line maps it to exit code 2.
 */
public class BadInputException extends RuntimeException {
  public BadInputException(String message) {
    super(message);
  }

  public BadInputException(String message, Throwable cause) {
    super(message, cause);
  }
}
