package io.actindex.cli;

import java.nio.file.Files;
import java.nio.file.Path;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * Mixin: {@code --index DIR}, an existing index folder. A path that exists but is not a folder (a
 * regular file, {@code /dev/null}) is refused when the command line is parsed; a folder that holds
 * no index is refused by the index reader.
 */
public final class IndexOption {
  @Spec(Spec.Target.MIXEE) CommandSpec mixee;

  Path dir;

  @Option(names = "--index", required = true, paramLabel = "DIR", description = "The index folder.")
  void dir(Path dir) {
    if (Files.exists(dir) && !Files.isDirectory(dir))
      throw new ParameterException(mixee.commandLine(), "--index " + dir + ": not a folder; an index is the folder 'actindex build --out' made");
    this.dir = dir;
  }
}
