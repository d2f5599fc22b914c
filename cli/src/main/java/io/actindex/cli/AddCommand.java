package io.actindex.cli;

import io.actindex.query.IndexBuilder;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.ParameterException;
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
  @Mixin StructureThreadsOption threads;
  @Mixin FormatOption format;

  @Override
  public Integer call() {
    source.check(null, false);
    if (source.codeLayout != null)
      throw new ParameterException(spec.commandLine(), "--code-layout is for build; add reads codes in the index's layout");
    IndexBuilder.AddParams params = new IndexBuilder.AddParams(index.dir, source.toSource(null), source.metaOptions(), 0, threads.value());
    IndexBuilder.Result result;
    try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "encoding rows")) {
      result = IndexBuilder.add(params, bar);
    }
    Summaries.written(spec.commandLine().getOut(), spec.commandLine().getErr(), format.format, "added to", index.dir, result);
    Summaries.warnings(spec.commandLine().getErr(), result.warnings());
    return ExitCodes.OK;
  }
}
