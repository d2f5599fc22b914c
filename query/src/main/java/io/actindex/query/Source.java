package io.actindex.query;

import java.nio.file.Path;
import java.util.Objects;

/**
 * Where codes come from: a file of activations, a file of codes, or inputs run through an MLP
 * ({@code model} may be {@code null} for queries and additions: the index's stored model is used).
 */
public record Source(Kind kind, Path file, Path model) {
  public enum Kind { ACTIVATIONS, CODES, INPUTS }

  public Source {
    Objects.requireNonNull(kind, "kind");
    Objects.requireNonNull(file, "file");
    if (kind != Kind.INPUTS && model != null) throw new IllegalArgumentException("a model goes only with inputs");
  }

  public static Source activations(Path file) {
    return new Source(Kind.ACTIVATIONS, file, null);
  }

  public static Source codes(Path file) {
    return new Source(Kind.CODES, file, null);
  }

  /** Inputs through {@code model} (safetensors), or through the index's model when it is null. */
  public static Source inputs(Path inputs, Path model) {
    return new Source(Kind.INPUTS, inputs, model);
  }
}
