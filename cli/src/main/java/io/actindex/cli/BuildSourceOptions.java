package io.actindex.cli;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeLayout;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.query.MetaCsv;
import io.actindex.query.Source;
import java.nio.file.Path;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * Mixin: where the codes of {@code build} and {@code add} come from (exactly one of activations,
 * codes, or inputs through a model) and the metadata CSV joined to them.
 */
public final class BuildSourceOptions {
  @Spec(Spec.Target.MIXEE) CommandSpec mixee;

  @Option(names = "--activations", paramLabel = "FILE",
      description = "Activations, rows = examples: .npy, .npz (one array per layer) or .csv.")
  Path activations;

  @Option(names = "--codes", paramLabel = "FILE",
      description = "Codes already binarized: .npy of bool, or 0/1 in any integer or float dtype, or uint8 packed 8 bits per byte (NumPy packbits order; build: give --code-layout; add: read in the index's layout).")
  Path codes;

  @Option(names = "--code-layout", paramLabel = "LAYOUT",
      description = "build only: layer names and widths of --codes, e.g. h1:64,h2:32 (needed for packed bits; default: one layer named code). add refuses it: it reads codes in the index's layout.")
  String codeLayout;

  @Option(names = "--inputs", paramLabel = "FILE",
      description = "Model inputs (.npy or .csv), run through the model (--model, or the index's model for add).")
  Path inputs;

  @Option(names = "--header", paramLabel = "yes|no|auto", defaultValue = "auto",
      description = "Whether the first line of a CSV source (--activations, --inputs) is a header; refused with other files. "
          + HeaderOption.AUTO_RULE)
  String header;

  @Option(names = "--meta", paramLabel = "CSV",
      description = "Metadata CSV with a header, then one row per example in the order of the source's rows (row i describes row i; the counts must match).")
  Path meta;

  @Option(names = "--key-column", paramLabel = "NAME",
      description = "Metadata column with each example's unique key (spaces around a key are not part of it, quoted or not). Default: 'key' if the header has it, else keys row-<id>.")
  String keyColumn;

  @Option(names = "--label-column", paramLabel = "NAME",
      description = "Metadata column with the class label. Default: 'label' if the header has it.")
  String labelColumn;

  @Option(names = "--split-column", paramLabel = "NAME",
      description = "Metadata column with the data split (train/test/...). Default: 'split' if the header has it.")
  String splitColumn;

  /** Checks that exactly one source is given; {@code model} is the --model option of the command, if any. */
  void check(Path model, boolean modelRequiredForInputs) {
    int given = (activations != null ? 1 : 0) + (codes != null ? 1 : 0) + (inputs != null ? 1 : 0);
    if (given != 1)
      throw new ParameterException(mixee.commandLine(), "give exactly one source: --activations FILE, --codes FILE, or "
          + (modelRequiredForInputs ? "--model FILE --inputs FILE" : "--inputs FILE (run through the model stored in the index)"));
    if (model != null && inputs == null)
      throw new ParameterException(mixee.commandLine(), "--model goes with --inputs");
    if (modelRequiredForInputs && inputs != null && model == null)
      throw new ParameterException(mixee.commandLine(), "--inputs needs --model FILE (an MLP as safetensors)");
    if (codeLayout != null && codes == null)
      throw new ParameterException(mixee.commandLine(), "--code-layout goes with --codes");
    GivenOptions.refuseUnlessCsv(mixee, "--header", activations != null ? activations : codes != null ? codes : inputs);
  }

  /** The source, after {@link #check}. */
  Source toSource(Path model) {
    CsvMatrixReader.Header h = CsvMatrixReader.parseHeader(header);
    if (activations != null) return Source.activations(activations).withHeader(h);
    if (codes != null) return Source.codes(codes);
    return Source.inputs(inputs, model).withHeader(h);
  }

  /** The metadata options, or null without --meta. */
  MetaCsv.Options metaOptions() {
    if (meta == null) {
      if (keyColumn != null || labelColumn != null || splitColumn != null)
        throw new ParameterException(mixee.commandLine(), "--key-column, --label-column and --split-column go with --meta");
      return null;
    }
    return new MetaCsv.Options(meta, keyColumn, labelColumn, splitColumn);
  }

  /** The --code-layout, or null. */
  CodeLayout codeLayout() {
    if (codeLayout == null) return null;
    try {
      return CodeLayout.parseTyped(codeLayout);
    } catch (IllegalArgumentException e) {
      throw new BadInputException("--code-layout: " + e.getMessage());
    }
  }
}
