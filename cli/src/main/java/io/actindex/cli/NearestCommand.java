package io.actindex.cli;

import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/** {@code actindex nearest}: the k indexed examples nearest to each query, by Hamming distance. */
@Command(name = "nearest", mixinStandardHelpOptions = true,
    description = {"For each query, the k indexed examples whose codes are nearest by Hamming distance (exact; ties by ascending id).",
        "Shows per-layer distances, key, label, split and metadata, and the neighbours' label vote."})
final class NearestCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin QuerySourceOptions query;

  @Option(names = "-k", paramLabel = "K", defaultValue = "10", description = "Neighbours per query. Default: ${DEFAULT-VALUE}.")
  int k;

  @Option(names = "--where", paramLabel = "EXPR",
      description = "Only examples whose metadata match, e.g. \"split = train and label != idle\" (see README).")
  String where;

  @Mixin LayersOption layers;
  @Mixin FormatOption format;
  @Mixin ThreadsOption threads;

  @Override
  public Integer call() {
    query.check();
    throw new UnsupportedOperationException("nearest: not yet wired to the query module");
  }
}
