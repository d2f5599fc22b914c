package io.actindex.cli;

import picocli.CommandLine;
import picocli.CommandLine.Model.ArgSpec;
import picocli.CommandLine.Model.OptionSpec;

/**
 * Default values for commands whose {@code --threads} ({@link ThreadsOption}) defaults to one
 * thread per core instead of one: their work is many independent exact searches or scans ({@code
 * nearest}, {@code ood}, {@code fidelity}, {@code report}'s nearest-other distances and join) or
 * statistics split over rows and relabelings ({@code compare}, also in {@code report}), each result
 * written to its own slot, so the output is the same for any thread count.
 */
final class AllCoresByDefault implements CommandLine.IDefaultValueProvider {
  @Override
  public String defaultValue(ArgSpec arg) {
    return arg instanceof OptionSpec o && o.longestName().equals("--threads") ? "0" : null;
  }
}
