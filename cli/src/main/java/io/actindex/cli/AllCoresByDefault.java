package io.actindex.cli;

import picocli.CommandLine;
import picocli.CommandLine.Model.ArgSpec;
import picocli.CommandLine.Model.OptionSpec;

/**
 * Default values for commands whose {@code --threads} ({@link ThreadsOption}) defaults to one
 * thread per core instead of one: their work is many independent exact searches or scans ({@code
 * ood}, {@code fidelity}) or statistics split over rows and relabelings ({@code compare}), and the
 * output is the same for any thread count.
 */
final class AllCoresByDefault implements CommandLine.IDefaultValueProvider {
  @Override
  public String defaultValue(ArgSpec arg) {
    return arg instanceof OptionSpec o && o.longestName().equals("--threads") ? "0" : null;
  }
}
