package io.actindex.query;

import io.actindex.core.BadParameterException;
import io.actindex.encode.io.CsvMatrixReader;
import java.nio.file.Path;
import java.util.Locale;
import java.util.Objects;

/**
 * Where codes come from: a file of activations, a file of codes, or inputs run through an MLP
 * ({@code model} may be {@code null} for queries and additions: the index's stored model is used).
 * {@code header} says whether a CSV file's first line is a header (default: detect).
 */
public record Source(Kind kind, Path file, Path model, CsvMatrixReader.Header header) {
  public enum Kind { ACTIVATIONS, CODES, INPUTS }

  public Source {
    Objects.requireNonNull(kind, "kind");
    Objects.requireNonNull(file, "file");
    if (kind != Kind.INPUTS && model != null) throw new BadParameterException("model", " goes only with a source of inputs, not " + kind.name().toLowerCase(Locale.ROOT));
    if (header == null) header = CsvMatrixReader.Header.AUTO;
  }

  public Source(Kind kind, Path file, Path model) {
    this(kind, file, model, CsvMatrixReader.Header.AUTO);
  }

  /** This source with the given CSV header rule. */
  public Source withHeader(CsvMatrixReader.Header h) {
    return new Source(kind, file, model, h);
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
