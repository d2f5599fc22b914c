package io.actindex.core;

/**
 * A refused value of one parameter of the Java API, named as the API names it (a {@code Params}
 * record component such as {@code matrixRows}, or {@code k}): the message is that name followed by
 * {@link #rest()}, e.g. {@code matrixRows must be from 2 to 4096, got 1}. The command line, where
 * the same value came from an option, prints the option's name in its place ({@code --matrix-rows
 * must be ...}) when the command has an option of that name, so a library user never reads an
 * option name they did not use.
 */
public final class BadParameterException extends BadInputException {
  private final String parameter;
  private final String rest;

  /** {@code rest} follows the name as written, e.g. {@code " must be at least 0, got -1"} or {@code ": unknown layer 'x'"}. */
  public BadParameterException(String parameter, String rest) {
    super(parameter + rest);
    this.parameter = parameter;
    this.rest = rest;
  }

  /** The parameter's name in the Java API, e.g. {@code matrixRows}. */
  public String parameter() {
    return parameter;
  }

  /** The message after the name. */
  public String rest() {
    return rest;
  }
}
