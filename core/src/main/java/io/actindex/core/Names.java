package io.actindex.core;

import java.text.Normalizer;

/**
 * Names of layers, columns and metadata fields as compared: Unicode NFC. A name written with a
 * combining accent ({@code cafe} + U+0301, NFD, as macOS file names and some tools write it) and
 * the same name precomposed ({@code caf} + U+00E9, NFC) print alike; readers of users' files
 * ({@code .npz} members, safetensors tensors, CSV headers, metadata headers) and typed names
 * ({@code --layers}, {@code --where} fields) pass through {@link #nfc}, so they are one name.
 * Values (labels, keys) are data and keep their code points.
 */
public final class Names {
  private Names() {}

  /** {@code name} in Unicode NFC (the same string when it is already). */
  public static String nfc(String name) {
    return Normalizer.isNormalized(name, Normalizer.Form.NFC) ? name : Normalizer.normalize(name, Normalizer.Form.NFC);
  }

  /** Whether two names are the same once both are in NFC (names stored before this rule may be NFD). */
  public static boolean same(String a, String b) {
    return a.equals(b) || nfc(a).equals(nfc(b));
  }
}
