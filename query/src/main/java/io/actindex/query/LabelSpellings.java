package io.actindex.query;

import io.actindex.encode.io.CsvMatrixReader;
import java.math.BigDecimal;
import java.util.HashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.function.Predicate;

/**
 * Labels that write the same number two ways ({@code 3} and {@code 3.0}): labels are compared as
 * text, so they are two labels, and an example labelled {@code 3} next to its copy labelled
 * {@code 3.0} is a label conflict. pandas writes a column of whole numbers as {@code 3.0} once it
 * holds a missing value (common practice), so a batch saved that way beside one saved without
 * gaps splits every class in two without an error. Found here, the user gets a note; the labels
 * stay as written.
 */
final class LabelSpellings {
  private LabelSpellings() {}

  /** Most distinct labels of a batch looked up in an index (each costs two term look-ups). */
  static final int MAX_LOOKUPS = 10_000;

  /** {@code label} as a number with no trailing zeros ({@code 3.0 -> 3}, {@code 2.50 -> 2.5}), or null if it is none. */
  static String number(String label) {
    if (label == null || label.isEmpty() || label.length() > 40 || !CsvMatrixReader.isDecimal(label)) return null;
    try {
      return new BigDecimal(label).stripTrailingZeros().toPlainString();
    } catch (NumberFormatException | ArithmeticException e) {
      return null;
    }
  }

  /**
   * A note for the first label of {@code rows} (their {@code label} values, in order) that writes
   * the number of an earlier one, or of a label {@code indexHas}, another way; null when none.
   */
  static String note(String file, List<Map<String, String>> rows, Predicate<String> indexHas) {
    Set<String> labels = new LinkedHashSet<>(); // each distinct label once, in file order (a build has a handful for a million rows)
    for (Map<String, String> row : rows) labels.add(row.get("label"));
    Map<String, String> seen = new HashMap<>(); // number -> its first spelling in the file
    int looked = 0;
    for (String label : labels) {
      String n = number(label);
      if (n == null) continue;
      String first = seen.putIfAbsent(n, label);
      if (first != null) return message(file, label, "'" + first + "' earlier in the file");
      if (indexHas != null && looked++ < MAX_LOOKUPS)
        for (String other : n.contains(".") ? List.of(n) : List.of(n, n + ".0"))
          if (!other.equals(label) && indexHas.test(other)) return message(file, label, "'" + other + "' in the index");
    }
    return null;
  }

  private static String message(String file, String label, String other) {
    return file + ": note: label '" + label + "' and " + other + " are the same number written two ways, and labels are compared as"
        + " text, so they count as two labels (label votes, purity and label conflicts); pandas writes whole numbers as 3.0 in a"
        + " column with a missing value. If they are the same class, write them the same way";
  }
}
