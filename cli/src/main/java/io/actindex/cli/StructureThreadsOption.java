package io.actindex.cli;

import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * Mixin: {@code --threads N} of the commands that build search structures (build, add, compact):
 * default one worker per core, since the index they write does not depend on it.
 */
public final class StructureThreadsOption {
  @Spec(Spec.Target.MIXEE) CommandSpec mixee;

  private int threads;

  @Option(names = "--threads", paramLabel = "N", defaultValue = "0",
      description = "Worker threads for the search structures (the index does not depend on it). Default: 0 = one per core.")
  void setThreads(int n) {
    if (n < 0) throw new ParameterException(mixee.commandLine(), "--threads must be 0 or more, got " + n);
    threads = n;
  }

  /** The count as given: 0 = one per core (the common fork-join pool). */
  int value() {
    return threads;
  }
}
