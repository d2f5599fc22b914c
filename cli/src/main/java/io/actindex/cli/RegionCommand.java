package io.actindex.cli;

import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/** {@code actindex region}: the query's linear region and the populated regions next to it. */
@Command(name = "region", mixinStandardHelpOptions = true,
    description = {"For each query: the indexed examples in exactly the same linear region (distance 0 on the chosen layers),",
        "then each populated region within R flipped neurons: distance, flipped neurons (layer:unit), size, label mix, example keys."})
final class RegionCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin QuerySourceOptions query;

  @Option(names = "--radius", paramLabel = "R", defaultValue = "2",
      description = "Also list populated regions within R flipped neurons (inclusive). Default: ${DEFAULT-VALUE}.")
  int radius;

  @Mixin LayersOption layers;
  @Mixin FormatOption format;
  @Mixin ThreadsOption threads;

  @Override
  public Integer call() {
    query.check();
    throw new UnsupportedOperationException("region: not yet wired to the query module");
  }
}
