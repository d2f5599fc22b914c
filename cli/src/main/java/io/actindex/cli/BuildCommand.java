package io.actindex.cli;

import io.actindex.encode.BinarizeRule;
import io.actindex.encode.EncodeOptions;
import io.actindex.query.IndexBuilder;
import java.nio.file.Path;
import java.util.List;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/** {@code actindex build}: a new index from activations, codes, or a model and its inputs. */
@Command(name = "build", mixinStandardHelpOptions = true,
    description = {"Builds a new index folder from activations, codes, or a model and its inputs, with optional metadata.",
        "The index remembers how it was built (rule, threshold, layers, the model and its layer order) so that later queries are encoded the same way.",
        "How the source was read (CSV header, the model's layer order, code layers and output layer) is printed on stderr (in the JSON document with --format json)."})
final class BuildCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;

  @Option(names = "--out", required = true, paramLabel = "DIR", description = "The new index folder (absent or empty).")
  Path out;

  @Option(names = "--model", paramLabel = "FILE",
      description = "An MLP as safetensors (PyTorch names NAME.weight [out,in], NAME.bias); with --inputs. Stored in the index.")
  Path model;

  @Mixin BuildSourceOptions source;

  @Option(names = "--layer-order", paramLabel = "LAYER", split = ",",
      description = {"The model's layers in forward order, comma separated, every layer named (as in NAME.weight), e.g. input,hidden,output.",
          "Default: by the numbers in the names when the names differ only in them (0,2,4; fc1,fc2; layer9,layer10), else the one order in which the weight shapes chain; several possible orders are refused. Stored in the index."})
  List<String> layerOrder;

  @Option(names = "--no-output-layer",
      description = "The model file holds hidden layers only: every layer becomes a code layer (default: the last layer is the output layer and is not encoded). Stored in the index.")
  boolean noOutputLayer;

  @Option(names = "--threshold", paramLabel = "T",
      description = "A neuron is on when its activation is > T (default: > 0, the ReLU rule).")
  Double threshold;

  @Option(names = "--median",
      description = "A neuron is on when its activation is above its median over the build data (for non-ReLU activations).")
  boolean median;

  @Option(names = "--magnitudes", paramLabel = "BITS|off",
      description = {"Keep each example's activations beside its code, quantised to BITS (8, 4 or 2) per unit with a per-unit"
          + " offset and step, for nearest --refine and fidelity; off keeps codes only.",
          "Default: 8 for activations and inputs (one byte per unit), off for codes."})
  String magnitudes;

  @Mixin StructureThreadsOption threads;

  @Mixin LayersOption layers;
  @Mixin FormatOption format;

  @Override
  public Integer call() {
    source.check(model, true);
    if (threshold != null && median)
      throw new ParameterException(spec.commandLine(), "--threshold and --median exclude each other");
    if (threshold != null && !Double.isFinite(threshold))
      throw new ParameterException(spec.commandLine(), "--threshold must be a finite number");
    if (threshold != null && source.codes != null)
      throw new ParameterException(spec.commandLine(), "--threshold binarizes activations; --codes are binary already (give --activations or --model with --inputs)");
    if (median && source.codes != null)
      throw new ParameterException(spec.commandLine(), "--median takes each neuron's median over activations; --codes carry none (give --activations or --model with --inputs)");
    BinarizeRule rule = median ? BinarizeRule.MEDIAN : threshold != null ? BinarizeRule.THRESHOLD : BinarizeRule.POSITIVE;
    if ((layerOrder != null || noOutputLayer) && model == null)
      throw new ParameterException(spec.commandLine(), "--layer-order and --no-output-layer go with --model");
    if (layerOrder != null && layerOrder.stream().anyMatch(String::isBlank))
      throw new ParameterException(spec.commandLine(), "--layer-order: empty layer name in " + layerOrder);
    EncodeOptions encode = new EncodeOptions(rule, threshold == null ? 0 : threshold, layers.layers).withModel(layerOrder, !noOutputLayer);
    IndexBuilder.BuildParams params = new IndexBuilder.BuildParams(out, source.toSource(model), source.metaOptions(), encode,
        source.codeLayout(), 0, magnitudeBits(), threads.value());
    IndexBuilder.Result result;
    try (Progress bar = Progress.onTerminal(spec.commandLine().getErr(), "encoding rows")) {
      result = IndexBuilder.build(params, bar);
    }
    Summaries.written(spec.commandLine().getOut(), spec.commandLine().getErr(), format.format, "built", out, result);
    Summaries.warnings(spec.commandLine().getErr(), result.warnings());
    return ExitCodes.OK;
  }

  /** --magnitudes as bits: -1 = the default, 0 = off. */
  private int magnitudeBits() {
    if (magnitudes == null) return -1;
    return switch (magnitudes.trim().toLowerCase(java.util.Locale.ROOT)) {
      case "off", "0" -> 0;
      case "2" -> 2;
      case "4" -> 4;
      case "8" -> 8;
      default -> throw new ParameterException(spec.commandLine(), "--magnitudes must be 8, 4, 2 or off, got '"
          + (magnitudes.length() > 20 ? magnitudes.substring(0, 20) + "..." : magnitudes) + "'");
    };
  }
}
