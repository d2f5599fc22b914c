package io.actindex.cli;

import java.nio.file.Path;
import picocli.CommandLine.Option;

/** Mixin: {@code --index DIR}, an existing index folder. */
public final class IndexOption {
  @Option(names = "--index", required = true, paramLabel = "DIR", description = "The index folder.")
  Path dir;
}
