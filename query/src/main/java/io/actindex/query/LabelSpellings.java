package io.actindex.query;

import io.actindex.core.IdSet;
import io.actindex.core.Names;
import java.text.Normalizer;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.index.meta.MetaStore;
import java.math.BigDecimal;
import java.util.HashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.function.UnaryOperator;

/**
 * Labels that write the same number two ways ({@code 3} and {@code 3.0}): labels are compared as
 * text, so they are two labels, and an example labelled {@code 3} next to its copy labelled
 * {@code 3.0} is a label conflict. pandas writes a column of whole numbers as {@code 3.0} once it
 * holds a missing value (common practice), so a batch saved that way beside one saved without
 * gaps splits every class in two without an error. Found here, the user gets a note; the labels
 * stay as written. Two labels write the same number when both are decimals ({@code [+-]digits[.digits][e[+-]digits]})
 * of equal value: {@code 3}, {@code 3.0}, {@code 3.00}, {@code 03}, {@code +3}; in the index only
 * plain spellings (no exponent) are looked for.
 *
 * <p>Likewise labels that are one text in two Unicode forms ({@code café} with a precomposed
 * {@code é}, NFC, and with {@code e} + a combining accent, NFD): they print alike but are two
 * labels. Labels are not normalised (they are data, kept as written, unlike names: see {@link
 * Names}); the note says so.
 */
final class LabelSpellings {
  private LabelSpellings() {}

  /** Most distinct labels of a batch looked up in an index (each costs one pattern look-up). */
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
   * A regular expression matching every plain decimal spelling of {@code number} (as {@link
   * #number} writes it): an optional sign ({@code -} for a negative number, {@code +} for a positive one,
   * either for zero), leading zeros, trailing zeros after the point, the point alone after a whole
   * number and the zero before it left out ({@code .5}). At least one digit. Written with escapes,
   * groups, {@code |}, {@code ?} and {@code *} only, which mean the same in Lucene's syntax ({@link
   * MetaStore#selectMatching}) and in {@link java.util.regex.Pattern}.
   */
  static String spellings(String number) {
    boolean negative = number.startsWith("-");
    String digits = negative ? number.substring(1) : number;
    int point = digits.indexOf('.');
    String whole = point < 0 ? digits : digits.substring(0, point), fraction = point < 0 ? "" : digits.substring(point + 1);
    if (whole.equals("0") && fraction.isEmpty()) return "(\\+|\\-)?(0+(\\.0*)?|\\.0+)";
    return (negative ? "\\-" : "\\+?") + "0*" + (whole.equals("0") ? "" : whole)
        + (fraction.isEmpty() ? "(\\.0*)?" : "\\." + fraction + "0*");
  }

  /**
   * A live label of the index that writes the number {@code label} writes another way (the one of
   * the smallest such id), or null: one pattern look-up of {@link #spellings}, and one document read
   * when it matches.
   */
  static String inIndex(MetaStore meta, String label) {
    if (!meta.fields().containsKey("label")) return null;
    String n = number(label);
    if (n == null) { // the label's other Unicode forms: two exact look-ups, none for plain ASCII
      for (String form : List.of(Names.nfc(label), Normalizer.normalize(label, Normalizer.Form.NFD), label.strip()))
        if (!form.equals(label) && !meta.selectEqual("label", form).isEmpty()) return form;
      return null;
    }
    IdSet ids = meta.selectMatching("label", spellings(n)).andNot(meta.selectEqual("label", label));
    int[] first = new int[1];
    if (ids.next(0, first) == 0) return null;
    Map<String, String> doc = meta.document(first[0]);
    return doc == null ? null : doc.get("label");
  }

  /**
   * A note for the first label of {@code rows} (their {@code label} values, in order) that writes
   * the number of an earlier one, or (when {@code inIndex}, as {@link #inIndex}, is given) of a
   * label of the index, another way; null when none.
   */
  static String note(String file, List<Map<String, String>> rows, UnaryOperator<String> inIndex) {
    Set<String> labels = new LinkedHashSet<>(); // each distinct label once, in file order (a build has a handful for a million rows)
    for (Map<String, String> row : rows) labels.add(row.get("label"));
    Map<String, String> seen = new HashMap<>(); // the number, or the text in NFC -> its first spelling in the file
    int looked = 0;
    for (String label : labels) {
      if (label == null) continue;
      String n = number(label);
      String first = seen.putIfAbsent(n != null ? n : "text:" + Names.nfc(label.strip()), label);
      if (first != null) return message(file, label, first, "' earlier in the file", n != null);
      boolean ascii = n == null && label.chars().allMatch(c -> c < 128) && label.strip().equals(label);
      if (ascii) continue; // neither a number, nor text with another Unicode form or spaces around it
      if (inIndex != null && looked++ < MAX_LOOKUPS) {
        String other = inIndex.apply(label);
        if (other != null) return message(file, label, other, "' in the index", n != null);
      }
    }
    return null;
  }

  private static String message(String file, String label, String otherLabel, String where, boolean number) {
    String other = "'" + otherLabel + where;
    boolean spaces = !number && (!label.strip().equals(label) || !otherLabel.strip().equals(otherLabel));
    String why = number ? "are the same number written two ways" : spaces ? "differ only in the spaces around them (kept inside"
        + " quotes: a spreadsheet or R's write.csv quotes every text cell)" : "are the same text in two Unicode forms (one writes an accent as a"
        + " separate combining mark, so they print alike)";
    return file + ": note: label '" + label + "' and " + other + " " + why + ", and labels are compared as"
        + " text, so they count as two labels (label votes, purity and label conflicts); " + (number ? "pandas writes whole numbers as 3.0 in a"
        + " column with a missing value" : spaces ? "Python's s.strip() writes every label without them"
        : "Python's unicodedata.normalize('NFC', s) writes every label one way") + ". If they are the same class,"
        + " write them the same way";
  }
}
