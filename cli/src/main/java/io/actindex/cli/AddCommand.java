package io.actindex.cli;

import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Spec;

/** {@code actindex add}: more examples into an existing index, as one atomic commit. */
@Command(name = "add", mixinStandardHelpOptions = true,
    description = {"Adds examples to an existing index as a new segment, committed atomically.",
        "They are encoded the way the index was built; --inputs uses the index's stored model."})
final class AddCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin BuildSourceOptions source;

  @Override
  public Integer call() {
    source.check(null, false);
    throw new UnsupportedOperationException("add: not yet wired to the query module");
  }
}
