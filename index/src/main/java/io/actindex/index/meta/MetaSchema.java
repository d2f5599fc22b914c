package io.actindex.index.meta;

import io.actindex.core.BadInputException;
import io.actindex.index.meta.MetaStore.FieldKind;
import java.nio.charset.StandardCharsets;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.regex.Pattern;
import org.apache.lucene.document.Document;
import org.apache.lucene.document.DoubleDocValuesField;
import org.apache.lucene.document.DoublePoint;
import org.apache.lucene.document.Field;
import org.apache.lucene.document.IntPoint;
import org.apache.lucene.document.NumericDocValuesField;
import org.apache.lucene.document.SortedDocValuesField;
import org.apache.lucene.document.StoredField;
import org.apache.lucene.document.StringField;
import org.apache.lucene.util.BytesRef;

/**
 * How metadata rows become Lucene documents, and the column kinds.
 *
 * <p>Every document: {@value #ID} (IntPoint + NumericDocValues + stored), {@value #KEY} (StringField,
 * stored, unique). {@code label}, {@code split}, {@code source} are always KEYWORD. Any other column
 * is NUMBER when every non-empty value in the batch that introduces it is a finite decimal number
 * that a double holds exactly ({@link #exactInDouble}; else equal filters would match neighbours) (DoublePoint + DoubleDocValuesField + the original text stored), else KEYWORD (StringField +
 * SortedDocValuesField, stored). A column keeps its kind for the life of the index: a later
 * non-number in a NUMBER column is refused. Empty values are not indexed or stored.
 *
 * <p>Kinds are kept in the Lucene commit's user data as {@code kind.NAME = keyword|number} (explicit
 * ids, not enum ordinals), so they commit atomically with the documents.
 */
final class MetaSchema {
  private MetaSchema() {}

  static final String ID = "id", KEY = "key";
  static final Set<String> FIXED_KEYWORDS = Set.of(KEY, "label", "split", "source");
  static final String KIND_PREFIX = "kind.";
  private static final Pattern NUMBER = Pattern.compile("[+-]?(\\d+(\\.\\d*)?|\\.\\d+)([eE][+-]?\\d+)?");
  /** Lucene's limit on one indexed term. */
  private static final int MAX_TERM_BYTES = 32766;

  static String kindId(FieldKind k) {
    return switch (k) {
      case KEYWORD -> "keyword";
      case NUMBER -> "number";
    };
  }

  static FieldKind kindOf(String id) {
    return switch (id) {
      case "keyword" -> FieldKind.KEYWORD;
      case "number" -> FieldKind.NUMBER;
      default -> throw new IllegalArgumentException("unknown field kind '" + id + "'");
    };
  }

  /** A finite decimal number that a double holds exactly enough that no other such text rounds to the same value. */
  static boolean isNumber(String v) {
    return NUMBER.matcher(v).matches() && exactInDouble(v);
  }

  /**
   * Whether the decimal {@code v} (already known to be one) equals the shortest decimal of the
   * double it parses to: then two such texts give the same double only when they are the same
   * number. False for infinities, for values that underflow, and for more significant digits than a
   * double keeps (integers past 2^53 such as 64-bit ids or nanosecond timestamps), which would
   * otherwise compare equal to their neighbours.
   */
  static boolean exactInDouble(String v) {
    double d = Double.parseDouble(v);
    return Double.isFinite(d) && new java.math.BigDecimal(v).compareTo(new java.math.BigDecimal(Double.toString(d))) == 0;
  }

  /**
   * Decides the kinds of the batch's columns given the index's {@code known} kinds; returns the
   * merged kinds. Refuses (naming row and column) a reserved column or a non-number in a NUMBER column.
   */
  static Map<String, FieldKind> kinds(Map<String, FieldKind> known, List<Map<String, String>> rows, int firstId) {
    Map<String, FieldKind> out = new LinkedHashMap<>(known);
    for (String k : FIXED_KEYWORDS) out.put(k, FieldKind.KEYWORD);
    Map<String, Integer> firstNonNumber = new LinkedHashMap<>();
    Map<String, Boolean> seen = new LinkedHashMap<>();
    for (int r = 0; r < rows.size(); r++) {
      for (Map.Entry<String, String> e : rows.get(r).entrySet()) {
        String col = e.getKey(), v = e.getValue();
        if (col == null || col.isEmpty()) throw new RowRefusal(r, "a column has no name");
        if (MetaStore.reservedColumn(col))
          throw new BadInputException("metadata column '" + col + "' is reserved; rename it");
        if (v == null || v.isEmpty()) continue;
        if (v.getBytes(StandardCharsets.UTF_8).length > MAX_TERM_BYTES)
          throw new RowRefusal(r, "column '" + col + "' (id " + (firstId + r) + "): value longer than " + MAX_TERM_BYTES + " bytes");
        seen.put(col, true);
        if (!firstNonNumber.containsKey(col) && !isNumber(v)) firstNonNumber.put(col, r);
      }
    }
    for (String col : seen.keySet()) {
      FieldKind have = out.get(col);
      Integer bad = firstNonNumber.get(col);
      if (have == FieldKind.NUMBER && bad != null)
        throw new RowRefusal(bad, "column '" + col + "' (id " + (firstId + bad) + "): '"
            + rows.get(bad).get(col) + "' is not a number"
            + (NUMBER.matcher(rows.get(bad).get(col)).matches() ? " a double holds exactly (about 15-17 significant digits)" : "")
            + ", and the column is numeric in this index");
      if (have == null) out.put(col, bad == null ? FieldKind.NUMBER : FieldKind.KEYWORD);
    }
    return out;
  }

  /** The document of one row; {@code row} must already hold its key. */
  static Document document(int id, Map<String, String> row, Map<String, FieldKind> kinds) {
    Document doc = new Document();
    doc.add(new IntPoint(ID, id));
    doc.add(new NumericDocValuesField(ID, id));
    doc.add(new StoredField(ID, id));
    for (Map.Entry<String, String> e : row.entrySet()) {
      String col = e.getKey(), v = e.getValue();
      if (v == null || v.isEmpty()) continue;
      if (col.equals(KEY)) {
        doc.add(new StringField(KEY, v, Field.Store.YES));
      } else if (kinds.get(col) == FieldKind.NUMBER) {
        double d = Double.parseDouble(v);
        doc.add(new DoublePoint(col, d));
        doc.add(new DoubleDocValuesField(col, d));
        doc.add(new StoredField(col, v));
      } else {
        doc.add(new StringField(col, v, Field.Store.YES));
        doc.add(new SortedDocValuesField(col, new BytesRef(v)));
      }
    }
    return doc;
  }
}
