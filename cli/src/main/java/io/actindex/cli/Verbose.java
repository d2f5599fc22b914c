package io.actindex.cli;

import picocli.CommandLine.Option;

/** Mixin: {@code --verbose}, which makes an internal error print its full stack trace. */
public final class Verbose {
  @Option(names = "--verbose", description = "On an internal error, print the full stack trace.")
  boolean verbose;
}
