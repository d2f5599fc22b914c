package io.actindex.cli;

import io.actindex.encode.io.CsvMatrixReader;
import java.nio.file.Path;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/**
 * Mixin: {@code --header} for the commands that read several data files (compare, dupes --against,
 * fidelity, ood eval): one rule for every CSV file of data they read, worded as the query and build
 * sources' own option.
 */
public final class HeaderOption {
  /** What {@code auto} does; shared by every {@code --header} description. */
  static final String AUTO_RULE = "auto (default): a header when every cell is text or the cells are the column numbers 0..d-1, data when"
      + " every cell is a number; a line mixing both, or of three or more evenly spaced numbers (1..d, 400,410,420: numbered column"
      + " names) or a first line 0 or 0,1 (column numbers or 0/1 codes), is refused, and so is a file without a header whose every row"
      + " (every row read, when reading stops early) is two whole numbers, the second unsigned (0,342: one column written with a"
      + " decimal comma reads so; no reads it as two columns).";

  @Spec(Spec.Target.MIXEE) CommandSpec mixee;

  @Option(names = "--header", paramLabel = "yes|no|auto", defaultValue = "auto",
      description = "Whether the first line of each CSV file of data this command reads is a header (a metadata CSV always has one);"
          + " refused when none is a CSV file. " + AUTO_RULE)
  String header;

  /** The rule, after refusing {@code --header} typed while none of {@code files} (null: not given) is a CSV file. */
  CsvMatrixReader.Header of(Path... files) {
    GivenOptions.refuseUnlessCsv(mixee, "--header", files);
    return CsvMatrixReader.parseHeader(header);
  }
}
