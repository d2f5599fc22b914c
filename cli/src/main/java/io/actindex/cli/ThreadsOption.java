package io.actindex.cli;

import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * Mixin: {@code --threads N}, the worker threads for work that runs in parallel; one per core by
 * default. Every command that takes it runs many independent exact searches or scans ({@code
 * nearest}, {@code ood}, {@code fidelity}, {@code report}) or statistics split over rows and
 * relabelings ({@code compare}), each result written to its own slot, so the output is the same for
 * any thread count.
 */
public final class ThreadsOption {
  @Spec(Spec.Target.MIXEE) CommandSpec mixee;

  private int threads;

  @Option(names = "--threads", paramLabel = "N", defaultValue = "0",
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
