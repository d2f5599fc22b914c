package io.actindex.cli;

import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Spec;

/** {@code actindex info}: what an index holds. */
@Command(name = "info", mixinStandardHelpOptions = true,
    description = "Shows an index's layout, segments, counts, bits dropped as constant, search plan, build settings and size on disk.")
final class InfoCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin FormatOption format;

  @Override
  public Integer call() {
    throw new UnsupportedOperationException("info: not yet wired to the query module");
  }
}
