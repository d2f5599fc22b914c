package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.Names;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.encode.io.Json;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;

/**
 * The column names of the file an index was built from (a CSV header line: activations, or a
 * model's inputs), kept in the index property {@link #PROPERTY} as a JSON array of strings, and the
 * check that a later file of the same kind with a header (a query, rows to add, a sample to compare)
 * names the same columns in the same order. Columns are read by position, so a header that names
 * them in another order, or names other columns, would give other codes without an error.
 * scikit-learn refuses the same at predict time: an estimator fitted on named features
 * ({@code feature_names_in_}) raises when the names differ or come in another order
 * (scikit-learn 1.x, {@code sklearn.base.BaseEstimator}, "The feature names should match those
 * that were passed during fit"). A file without a header cannot be checked and is read by position.
 * The column numbers {@code 0, 1, ..., d-1} that pandas writes over the columns of {@code
 * DataFrame(array)} are its labels, kept through a reordering, so they are checked against a
 * header of numbers; against names they tell nothing of which column is which (scikit-learn keeps
 * no feature names for integer labels either), so such a pair is read by position.
 */
final class SourceColumns {
  private SourceColumns() {}

  /** Index property: the build file's column names, a JSON array. */
  static final String PROPERTY = "build.source.columns";

  /**
   * Longest names record kept, in UTF-8 bytes: every commit rewrites the manifest that holds it, so a
   * header longer than this (tens of thousands of columns) is not recorded, and so not checked.
   */
  static final int MAX_BYTES = 256 << 10;

  /** Records {@code names} in {@code props} (nothing when null or longer than {@link #MAX_BYTES}). */
  static void put(Map<String, String> props, List<String> names) {
    if (names == null) return;
    String json = Json.quote(names);
    if (json.getBytes(java.nio.charset.StandardCharsets.UTF_8).length <= MAX_BYTES) props.put(PROPERTY, json);
  }

  /** The recorded names, or null when the index records none (built from a file without a header). */
  static List<String> of(Map<String, String> props, String dir) {
    String v = props.get(PROPERTY);
    if (v == null) return null;
    try {
      if (Json.parse(v) instanceof List<?> list) {
        List<String> names = new ArrayList<>();
        for (Object o : list) names.add((String) o);
        return names;
      }
    } catch (IllegalArgumentException | ClassCastException e) {
      // falls through to the refusal
    }
    throw new BadInputException(dir + ": damaged build property " + PROPERTY);
  }

  /**
   * Refuses {@code given} (the header of {@code file}) when it differs from {@code expected} (the
   * header of what {@code expectedFrom} describes). Either null, of another length (a width the
   * caller refuses on its own), or {@link #numbered} against names that are not all numbers:
   * nothing to check.
   */
  static void check(List<String> expected, String expectedFrom, List<String> given, String file) {
    if (expected == null || given == null || expected.size() != given.size() || expected.equals(given)) return;
    if (numbered(expected) && !numbers(given) || numbered(given) && !numbers(expected)) return;
    int i = 0;
    while (i < given.size() && Names.same(expected.get(i), given.get(i))) i++; // a header stored before names were NFC
    if (i == given.size()) return;
    String at = file + ": column " + i + " (0-based) is " + BadInputException.quote(given.get(i)) + " where " + expectedFrom + " has "
        + BadInputException.quote(expected.get(i));
    if (sameNames(expected, given))
      throw new BadInputException(at + ": the header names the same " + given.size() + " columns in another order, and columns are read by"
          + " position, not by name; write them in that order");
    throw new BadInputException(at + "; columns are read by position, not by name: write the same columns in the same order (or, if only"
        + " the names differ, write the file without its header line)");
  }

  /** The names are {@code 0, 1, ..., d-1}: the column numbers a data-frame library writes over unnamed columns. */
  static boolean numbered(List<String> names) {
    for (int i = 0; i < names.size(); i++) if (!names.get(i).equals(Integer.toString(i))) return false;
    return true;
  }


  /** Every name is a decimal number (other column numbers, or a first row of data read as a header with --header yes). */
  private static boolean numbers(List<String> names) {
    for (String s : names) if (!CsvMatrixReader.isDecimal(s)) return false;
    return true;
  }

  private static boolean sameNames(List<String> a, List<String> b) {
    Map<String, Integer> count = new HashMap<>();
    for (String s : a) count.merge(s, 1, Integer::sum);
    for (String s : b)
      if (count.merge(s, -1, Integer::sum) < 0) return false;
    return true;
  }
}
