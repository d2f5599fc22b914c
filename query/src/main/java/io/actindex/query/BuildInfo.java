package io.actindex.query;

import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.core.BadInputException;
import io.actindex.core.CodeLayout;
import java.util.HashMap;
import java.util.Map;

/**
 * How an index was built, kept in its properties so that later queries and additions given raw
 * activations or inputs are encoded the same way: the source kind, the layout the source produced
 * (before layers were dropped), whether the model is stored as the attachment {@link #MODEL}, and
 * the encoding options (stored through {@link Encoders#describe}).
 */
public record BuildInfo(Source.Kind kind, CodeLayout sourceLayout, boolean hasModel, EncodeOptions encode) {
  /** Property keys (ours; the encode options add their own). */
  public static final String KIND = "build.source.kind", SOURCE_LAYOUT = "build.source.layout", HAS_MODEL = "build.model";

  /** Name of the attachment that holds the model's safetensors bytes. */
  public static final String MODEL = "model.safetensors";

  public Map<String, String> toProperties() {
    Map<String, String> p = new HashMap<>(Encoders.describe(encode));
    p.put(KIND, kind.name().toLowerCase(java.util.Locale.ROOT));
    p.put(SOURCE_LAYOUT, sourceLayout.toString());
    p.put(HAS_MODEL, Boolean.toString(hasModel));
    return p;
  }

  /** Reads the build record of an index; an index without one is a {@link BadInputException}. */
  public static BuildInfo fromProperties(Map<String, String> p, String dir) {
    String kind = p.get(KIND), layout = p.get(SOURCE_LAYOUT);
    if (kind == null || layout == null)
      throw new BadInputException(dir + ": the index does not record how it was built (property " + KIND + " missing)");
    try {
      return new BuildInfo(Source.Kind.valueOf(kind.toUpperCase(java.util.Locale.ROOT)), CodeLayout.parse(layout),
          Boolean.parseBoolean(p.get(HAS_MODEL)), Encoders.fromProperties(p));
    } catch (IllegalArgumentException e) {
      throw new BadInputException(dir + ": damaged build properties: " + e.getMessage(), e);
    }
  }
}
