package io.actindex.cli;

import java.util.ArrayList;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * Reads {@code --format csv} output the way docs/commands/README.md tells users to: rows split on
 * commas (the tests' values hold no comma or quote), a list cell split on {@code ;}, a
 * {@code NAME:COUNT} item split at its last {@code :}.
 */
final class CsvCells {
  private CsvCells() {}

  /** The data rows (header left out), each split into its fields. */
  static List<String[]> rows(String csv) {
    List<String[]> rows = new ArrayList<>();
    csv.lines().skip(1).forEach(l -> rows.add(l.split(",", -1)));
    return rows;
  }

  /** A list cell's items; an empty cell is an empty list. */
  static List<String> items(String cell) {
    return cell.isEmpty() ? List.of() : Arrays.asList(cell.split(";", -1));
  }

  /** A cell of {@code NAME:COUNT} items, in their order. */
  static Map<String, Integer> counts(String cell) {
    Map<String, Integer> m = new LinkedHashMap<>();
    for (String item : items(cell)) {
      int at = item.lastIndexOf(':');
      m.put(item.substring(0, at), Integer.parseInt(item.substring(at + 1)));
    }
    return m;
  }
}
