package io.actindex.cli;

import io.actindex.core.Names;
import io.actindex.query.Snippet;
import java.util.ArrayList;
import java.util.List;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * Mixin: {@code --layers a,b}: which layers (code segments) to use. An empty name ({@code --layers ,}
 * or {@code a,,b}) or a name given twice is refused when the command line is parsed.
 */
public final class LayersOption {
  @Spec(Spec.Target.MIXEE) CommandSpec mixee;

  /** The chosen layers in order, or null for all. */
  List<String> layers;

  @Option(names = "--layers", paramLabel = "LAYER[,LAYER...]",
      description = "Only these layers, comma separated (names as 'actindex info' lists them). Default: all.")
  void layers(List<String> values) {
    List<String> names = new ArrayList<>();
    for (String value : values)
      for (String name : value.split(",", -1)) {
        if (name.isBlank())
          throw new ParameterException(mixee.commandLine(), "--layers '" + Snippet.of(value) + "': empty layer name; give names like h1,h2");
        String layer = Names.nfc(name.strip()); // as the readers give layer names (an accent typed as a combining mark is the same name)
        if (names.contains(layer))
          throw new ParameterException(mixee.commandLine(), "--layers: layer '" + Snippet.of(layer) + "' is given twice");
        names.add(layer);
      }
    layers = List.copyOf(names);
  }
}
