package io.actindex.cli;

import java.util.List;
import picocli.CommandLine.Option;

/** Mixin: {@code --layers a,b}: which layers (code segments) to use. */
public final class LayersOption {
  @Option(names = "--layers", paramLabel = "LAYER", split = ",",
      description = "Only these layers, comma separated (names as 'actindex info' lists them). Default: all.")
  List<String> layers;
}
