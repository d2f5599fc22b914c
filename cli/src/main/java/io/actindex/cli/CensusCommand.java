package io.actindex.cli;

import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Spec;

/** {@code actindex census}: how the indexed examples spread over linear regions. */
@Command(name = "census", mixinStandardHelpOptions = true,
    description = {"How the indexed examples spread over linear regions: distinct regions per prefix of layers, examples per region,",
        "label purity of regions, and per-neuron firing rates with the dead and always-on neurons listed."})
final class CensusCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin FormatOption format;

  @Override
  public Integer call() {
    throw new UnsupportedOperationException("census: not yet wired to the query module");
  }
}
