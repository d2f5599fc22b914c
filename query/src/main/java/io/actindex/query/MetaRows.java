package io.actindex.query;

import java.util.AbstractList;
import java.util.AbstractMap;
import java.util.AbstractSet;
import java.util.Arrays;
import java.util.HashMap;
import java.util.Iterator;
import java.util.Map;
import java.util.NoSuchElementException;
import java.util.RandomAccess;
import java.util.Set;

/**
 * The rows of a metadata CSV held by column: one array of values per field, a value repeated in a
 * column (a label, a split) held once, and each row a read-only map over its non-empty values in
 * column order, made when asked for. A million rows of a few short fields take about a tenth of
 * what one hash map per row took.
 */
final class MetaRows extends AbstractList<Map<String, String>> implements RandomAccess {
  /** Distinct values a column shares before it stops looking for repeats (keys, free text). */
  static final int SHARED = 4096;

  private final String[] names;
  private final String[][] values; // [column][row]; null where the cell is empty
  private final Map<String, Integer> column = new HashMap<>();
  private final Map<String, String>[] shared;
  private int size;

  @SuppressWarnings("unchecked")
  MetaRows(String[] names) {
    this.names = names.clone();
    values = new String[names.length][16];
    shared = new Map[names.length];
    for (int c = 0; c < names.length; c++) {
      column.put(names[c], c);
      shared[c] = new HashMap<>();
    }
  }

  /** Appends a row: {@code cells[c]} is the value of field {@code c} (null or empty: none). */
  void add(String[] cells) {
    if (names.length > 0 && size == values[0].length)
      for (int c = 0; c < names.length; c++) values[c] = Arrays.copyOf(values[c], size * 2);
    for (int c = 0; c < names.length; c++) {
      String v = cells[c] == null || cells[c].isEmpty() ? null : cells[c];
      Map<String, String> s = shared[c];
      if (v != null && s != null) {
        String first = s.putIfAbsent(v, v);
        if (first != null) v = first;
        else if (s.size() > SHARED) shared[c] = null; // mostly distinct: stop looking
      }
      values[c][size] = v;
    }
    size++;
  }

  /** The value of {@code field} in row {@code row}, or null. */
  String value(int row, String field) {
    Integer c = column.get(field);
    return c == null ? null : values[c][row];
  }

  @Override
  public Map<String, String> get(int row) {
    java.util.Objects.checkIndex(row, size);
    return new Row(row);
  }

  @Override
  public int size() {
    return size;
  }

  /** One row, read-only. */
  private final class Row extends AbstractMap<String, String> {
    private final int row;

    Row(int row) {
      this.row = row;
    }

    @Override
    public String get(Object key) {
      return key instanceof String k ? value(row, k) : null;
    }

    @Override
    public boolean containsKey(Object key) {
      return get(key) != null;
    }

    @Override
    public Set<Entry<String, String>> entrySet() {
      return new AbstractSet<>() {
        @Override
        public Iterator<Entry<String, String>> iterator() {
          return new Iterator<>() {
            private int c = next(0);

            private int next(int from) {
              while (from < names.length && values[from][row] == null) from++;
              return from;
            }

            @Override
            public boolean hasNext() {
              return c < names.length;
            }

            @Override
            public Entry<String, String> next() {
              if (c >= names.length) throw new NoSuchElementException();
              Entry<String, String> e = new SimpleImmutableEntry<>(names[c], values[c][row]);
              c = next(c + 1);
              return e;
            }
          };
        }

        @Override
        public int size() {
          int n = 0;
          for (String[] col : values) if (col[row] != null) n++;
          return n;
        }
      };
    }
  }
}
