package io.actindex.cli;

import io.actindex.cli.format.Format;
import picocli.CommandLine.Option;

/** Mixin: {@code --format table|json|csv}. */
public final class FormatOption {
  @Option(names = "--format", paramLabel = "FMT", defaultValue = "table",
      description = "Output: table (for reading), json (one document on stdout), csv. Default: ${DEFAULT-VALUE}.")
  Format format;
}
