package io.actindex.cli;

import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/** Mixin: {@code --threads N}, the worker threads for work that runs in parallel. */
public final class ThreadsOption {
  @Spec(Spec.Target.MIXEE) CommandSpec mixee;

  private int threads = 1;

  @Option(names = "--threads", paramLabel = "N", defaultValue = "1",
      description = "Worker threads (results keep their order). Default: ${DEFAULT-VALUE} (0 = one per core).")
  void setThreads(int n) {
    if (n < 0) throw new ParameterException(mixee.commandLine(), "--threads must be 0 or more, got " + n);
    threads = n;
  }

  /** The thread count to use: at least 1; 0 means one per available processor. */
  int resolved() {
    return threads == 0 ? Runtime.getRuntime().availableProcessors() : threads;
  }
}
