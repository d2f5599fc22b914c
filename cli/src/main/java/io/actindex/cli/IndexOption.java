package io.actindex.cli;

import java.io.PrintWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * Mixin: {@code --index DIR}, an existing index folder. A path that exists but is not a folder (a
 * regular file, {@code /dev/null}) is refused when the command line is parsed; a folder that holds
 * no index is refused by the index reader. An index that holds no live example (every one deleted)
 * is not bad input: commands with an empty answer give it and {@link #noteIfEmpty} says why.
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

  /**
   * After a command's work succeeded on an index of {@code live} live examples: one line on stderr
   * when there are none, so that an empty answer is not mistaken for "nothing matched". Called once
   * any progress bar is closed.
   */
  void noteIfEmpty(int live) {
    if (live > 0) return;
    PrintWriter err = mixee.commandLine().getErr();
    err.println("note: the index " + dir + " holds no live examples (every example was deleted); the answer is empty");
    err.flush();
  }
}
