package io.actindex.query;

import io.actindex.core.BadInputException;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * Reads a metadata CSV (RFC 4180: a header row, comma separated, fields in double quotes may hold
 * commas, quotes written twice and line breaks) into one row map per example. Row {@code i} of the
 * CSV belongs to row {@code i} of the codes (join by row order). The key column names each
 * example (keys must be unique; without a key column the store generates {@code row-<id>}); the
 * label and split columns become {@code label} and {@code split}; every other column keeps its
 * name and becomes a filterable field. Empty values are left out of the row map.
 */
public final class MetaCsv {
  private MetaCsv() {}

  /**
   * Which columns play which role. A column named explicitly must exist; {@code null} means the
   * default name ({@code key}, {@code label}, {@code split}) if the header has it, else none.
   */
  public record Options(Path file, String keyColumn, String labelColumn, String splitColumn) {
    public Options {
      java.util.Objects.requireNonNull(file, "file");
    }

    public static Options of(Path file) {
      return new Options(file, null, null, null);
    }
  }

  /** Reads every row. */
  public static List<Map<String, String>> read(Options o) {
    String name = o.file().toString();
    try (BufferedReader in = Files.newBufferedReader(o.file(), StandardCharsets.UTF_8)) {
      Parser p = new Parser(in, name);
      List<String> header = p.next();
      if (header == null) throw new BadInputException(name + ": empty file; a metadata CSV needs a header row");
      if (!header.isEmpty() && header.get(0).startsWith("\uFEFF")) header.set(0, header.get(0).substring(1));
      String[] target = targets(header, o, name);
      List<Map<String, String>> rows = new ArrayList<>();
      Map<String, Integer> keyRow = new HashMap<>();
      int keyCol = indexOf(target, "key");
      for (List<String> fields; (fields = p.next()) != null; ) {
        int line = p.recordLine;
        if (fields.size() == 1 && fields.get(0).isEmpty()) continue; // blank line
        if (fields.size() != header.size())
          throw new BadInputException(name + ": line " + line + " has " + fields.size() + " fields, the header has " + header.size());
        Map<String, String> row = new LinkedHashMap<>();
        for (int c = 0; c < fields.size(); c++) if (!fields.get(c).isEmpty()) row.put(target[c], fields.get(c));
        if (keyCol >= 0) {
          String key = fields.get(keyCol);
          if (key.isEmpty()) throw new BadInputException(name + ": line " + line + ": empty key in column '" + header.get(keyCol) + "'");
          Integer first = keyRow.putIfAbsent(key, line);
          if (first != null)
            throw new BadInputException(name + ": line " + line + ": key '" + key + "' already used on line " + first);
        }
        rows.add(row);
      }
      return rows;
    } catch (IOException e) {
      throw new BadInputException(name + ": cannot read: " + e.getMessage(), e);
    } catch (UncheckedIOException e) {
      throw new BadInputException(name + ": cannot read: " + e.getCause().getMessage(), e);
    }
  }

  /** Field name for each CSV column. */
  private static String[] targets(List<String> header, Options o, String name) {
    String[] target = new String[header.size()];
    for (int c = 0; c < target.length; c++) target[c] = header.get(c).trim();
    assign(target, header, o.keyColumn(), "key", name);
    assign(target, header, o.labelColumn(), "label", name);
    assign(target, header, o.splitColumn(), "split", name);
    for (int c = 0; c < target.length; c++) {
      if (target[c].isEmpty()) throw new BadInputException(name + ": column " + (c + 1) + " has an empty name");
      if (target[c].equals("id"))
        throw new BadInputException(name + ": column 'id' is reserved for the index's ids; pass it as the key column or rename it");
      for (int d = 0; d < c; d++)
        if (target[d].equals(target[c]))
          throw new BadInputException(name + ": columns " + (d + 1) + " and " + (c + 1) + " both become field '" + target[c] + "'");
    }
    return target;
  }

  private static void assign(String[] target, List<String> header, String column, String role, String name) {
    if (column == null) return; // default: a column literally named like the role plays it
    int c = header.stream().map(String::trim).toList().indexOf(column);
    if (c < 0) throw new BadInputException(name + ": no column '" + column + "' for the " + role + "; the header has " + header);
    target[c] = role;
    if (!column.equals(role)) // a column literally named like the role, but not chosen, would clash
      for (int d = 0; d < target.length; d++)
        if (d != c && target[d].equals(role))
          throw new BadInputException(name + ": column '" + role + "' clashes with the " + role + " column '" + column + "'; rename one");
  }

  private static int indexOf(String[] a, String s) {
    for (int i = 0; i < a.length; i++) if (a[i].equals(s)) return i;
    return -1;
  }

  /** Minimal RFC 4180 record reader. */
  private static final class Parser {
    private final BufferedReader in;
    private final String name;
    private int line = 1;
    int recordLine;

    Parser(BufferedReader in, String name) {
      this.in = in;
      this.name = name;
    }

    List<String> next() throws IOException {
      int c = in.read();
      if (c < 0) return null;
      recordLine = line;
      List<String> fields = new ArrayList<>();
      StringBuilder f = new StringBuilder();
      boolean quoted = false, wasQuoted = false;
      while (true) {
        if (quoted) {
          if (c < 0) throw new BadInputException(name + ": line " + recordLine + ": quoted field never closed");
          if (c == '"') {
            int d = in.read();
            if (d == '"') f.append('"');
            else {
              quoted = false;
              c = d;
              continue;
            }
          } else {
            if (c == '\n') line++;
            f.append((char) c);
          }
        } else if (c == ',' || c == '\n' || c == '\r' || c < 0) {
          fields.add(wasQuoted ? f.toString() : f.toString().trim());
          f.setLength(0);
          wasQuoted = false;
          if (c == ',') {
            c = in.read();
            continue;
          }
          if (c == '\r') {
            in.mark(1);
            if (in.read() != '\n') in.reset();
          }
          if (c >= 0) line++;
          return fields;
        } else if (c == '"' && f.toString().isBlank()) {
          quoted = wasQuoted = true;
          f.setLength(0);
        } else {
          if (wasQuoted) throw new BadInputException(name + ": line " + recordLine + ": text after a closing quote");
          f.append((char) c);
        }
        c = in.read();
      }
    }
  }
}
