package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.Names;
import io.actindex.index.meta.MetaStore;
import java.io.BufferedInputStream;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.nio.ByteBuffer;
import java.nio.CharBuffer;
import java.nio.charset.CharsetDecoder;
import java.nio.charset.CoderResult;
import java.nio.charset.CodingErrorAction;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;

/**
 * Reads a metadata CSV (RFC 4180: a header row, comma separated, fields in double quotes may hold
 * commas, quotes written twice and line breaks) into one row map per example. Row {@code i} of the
 * CSV belongs to row {@code i} of the codes (join by row order). The key column names each
 * example (keys must be unique; without a key column the store generates {@code row-<id>}; the
 * whitespace around a key is not part of it, {@link MetaStore#key}, also inside quotes); the
 * label and split columns become {@code label} and {@code split}; every other column keeps its
 * name (in Unicode NFC, {@link Names}) and becomes a filterable field. Empty values are left out of the row map.
 * The rows are held by column ({@link MetaRows}), read-only. A header of one
 * column whose name holds a semicolon or a tab is refused: the file is separated by those, and
 * read by commas it would become one field named after the whole header line.
 *
 * <p>The file must be UTF-8 (a byte order mark is skipped); UTF-16, Latin-1 or other bytes that
 * are not UTF-8 are refused with the line. Limits, far above what metadata needs, keep a wrong
 * file from exhausting memory: at most {@link #MAX_COLUMNS} columns, {@link #MAX_CELL_CHARS}
 * characters per cell and {@link #MAX_LINE_BYTES} bytes per line. Messages quote at most a short
 * prefix of a value ({@link Snippet}).
 */
public final class MetaCsv {
  private MetaCsv() {}

  /** Most columns in a metadata CSV (every column becomes a metadata field of every example). */
  public static final int MAX_COLUMNS = 1000;
  /** Longest cell, in characters (at most 3 UTF-8 bytes each, under Lucene's 32,766-byte term limit). */
  public static final int MAX_CELL_CHARS = 10_000;
  /** Longest line, in bytes (a quoted cell may span lines; each line is checked). */
  public static final int MAX_LINE_BYTES = 1 << 20;

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
    try (InputStream in = new BufferedInputStream(Files.newInputStream(o.file()), 1 << 16)) {
      Parser p = new Parser(new Utf8Lines(in, name), name);
      List<String> header = p.next();
      if (header == null) throw new BadInputException(name + ": empty file; a metadata CSV needs a header row");
      if (header.size() == 1 && (header.getFirst().contains(";") || header.getFirst().contains("\t")))
        throw new BadInputException(name + ": line 1: the header is one column named '" + Snippet.of(header.getFirst()) + "': the file is separated by "
            + (header.getFirst().contains(";") ? "semicolons (as spreadsheets in European languages save CSV)" : "tabs")
            + ", but metadata is read comma-separated: save it with commas (pandas: to_csv(sep=','))");
      String[] target = targets(header, o, name);
      MetaRows rows = new MetaRows(target);
      Map<String, Integer> keyRow = new HashMap<>();
      int keyCol = indexOf(target, "key");
      for (List<String> fields; (fields = p.next()) != null; ) {
        int line = p.recordLine;
        if (fields.size() == 1 && fields.get(0).isEmpty()) continue; // blank line
        if (fields.size() != header.size())
          throw new BadInputException(name + ": line " + line + " has " + fields.size() + " fields, the header has " + header.size());
        String[] row = fields.toArray(String[]::new);
        if (keyCol >= 0) {
          String key = MetaStore.key(fields.get(keyCol)); // spaces around a key are not part of it, quoted or not
          if (key.isEmpty()) throw new BadInputException(name + ": line " + line + ": empty key in column '" + header.get(keyCol) + "'");
          Integer first = keyRow.putIfAbsent(key, line);
          if (first != null)
            throw new BadInputException(name + ": line " + line + ": key '" + Snippet.of(key) + "' already used on line " + first);
          row[keyCol] = key;
        }
        rows.add(row);
      }
      return rows;
    } catch (IOException e) {
      throw new BadInputException(name + ": cannot read: " + e.getMessage(), e);
    }
  }

  /** Field name for each CSV column. */
  private static String[] targets(List<String> header, Options o, String name) {
    String[] target = new String[header.size()];
    for (int c = 0; c < target.length; c++) target[c] = Names.nfc(header.get(c).trim()); // one Unicode form for names
    assign(target, header, o.keyColumn(), "key", name);
    assign(target, header, o.labelColumn(), "label", name);
    assign(target, header, o.splitColumn(), "split", name);
    for (int c = 0; c < target.length; c++) {
      if (target[c].isEmpty())
        throw new BadInputException(name + ": column " + (c + 1) + " has an empty name" + (c == 0 ? " (a row index written by pandas' to_csv?"
            + " write the file with index=False)" : ""));
      if (target[c].equals("id"))
        throw new BadInputException(name + ": column 'id' is reserved for the index's ids; pass it as the key column or rename it");
      if (MetaStore.reservedColumn(target[c]))
        throw new BadInputException(name + ": column '" + Snippet.of(target[c]) + "' has a name the index keeps for itself; rename it");
      for (int d = 0; d < c; d++)
        if (target[d].equals(target[c]))
          throw new BadInputException(name + ": columns " + (d + 1) + " and " + (c + 1) + " both become field '" + Snippet.of(target[c]) + "'");
    }
    return target;
  }

  private static void assign(String[] target, List<String> header, String column, String role, String name) {
    if (column == null) return; // default: a column literally named like the role plays it
    int c = header.stream().map(h -> Names.nfc(h.trim())).toList().indexOf(Names.nfc(column));
    if (c < 0)
      throw new BadInputException(name + ": no column '" + Snippet.of(column) + "' for the " + role + "; the header has "
          + Snippet.of(String.join(", ", header), 200));
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

  /** Minimal RFC 4180 record reader with the column and cell limits. */
  private static final class Parser {
    private final Utf8Lines in;
    private final String name;
    private int line = 1;
    int recordLine;

    Parser(Utf8Lines in, String name) {
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
        if (f.length() > MAX_CELL_CHARS)
          throw new BadInputException(name + ": line " + recordLine + ", column " + (fields.size() + 1) + ": a cell longer than "
              + String.format(java.util.Locale.ROOT, "%,d", MAX_CELL_CHARS) + " characters, starting '" + Snippet.of(f.toString(), 20)
              + "'; metadata cells are short text or numbers");
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
          if (fields.size() == MAX_COLUMNS)
            throw new BadInputException(name + ": line " + recordLine + ": more than " + MAX_COLUMNS
                + " columns; a metadata CSV holds a few columns per example (keep features out of it)");
          fields.add(wasQuoted ? f.toString() : f.toString().trim());
          f.setLength(0);
          wasQuoted = false;
          if (c == ',') {
            c = in.read();
            continue;
          }
          if (c == '\r' && in.peek() == '\n') in.read();
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

  /**
   * The characters of a UTF-8 file, decoded one line at a time so that a refusal names the line:
   * bytes that are not UTF-8 (Latin-1, Windows-1252), UTF-16 (a byte order mark or NUL bytes), or
   * a line longer than {@link #MAX_LINE_BYTES}. A UTF-8 byte order mark is skipped.
   */
  static final class Utf8Lines {
    private final InputStream in;
    private final String name;
    private final CharsetDecoder decoder = StandardCharsets.UTF_8.newDecoder()
        .onMalformedInput(CodingErrorAction.REPORT).onUnmappableCharacter(CodingErrorAction.REPORT);
    private final ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    private CharBuffer chars = CharBuffer.allocate(0);
    private int lineNo;
    private boolean eof;

    Utf8Lines(InputStream in, String name) {
      this.in = in;
      this.name = name;
    }

    int read() throws IOException {
      if (!chars.hasRemaining() && !fill()) return -1;
      return chars.get();
    }

    int peek() throws IOException {
      if (!chars.hasRemaining() && !fill()) return -1;
      return chars.get(chars.position());
    }

    private boolean fill() throws IOException {
      while (!eof) {
        bytes.reset();
        int b;
        while ((b = in.read()) >= 0) {
          if (bytes.size() == MAX_LINE_BYTES)
            throw new BadInputException(name + ": line " + (lineNo + 1) + " is longer than " + String.format(java.util.Locale.ROOT,
                "%,d", MAX_LINE_BYTES) + " bytes; is this a metadata CSV?");
          bytes.write(b);
          if (b == '\n') break;
        }
        if (b < 0) eof = true;
        if (bytes.size() == 0) continue;
        lineNo++;
        byte[] line = bytes.toByteArray();
        int from = 0;
        if (lineNo == 1) {
          if (line.length >= 2 && ((line[0] == (byte) 0xFF && line[1] == (byte) 0xFE) || (line[0] == (byte) 0xFE && line[1] == (byte) 0xFF)))
            throw new BadInputException(name + ": line 1: the file is UTF-16 (it starts with a UTF-16 byte order mark); save it as UTF-8");
          if (line.length >= 3 && line[0] == (byte) 0xEF && line[1] == (byte) 0xBB && line[2] == (byte) 0xBF) from = 3;
        }
        for (int i = from; i < line.length; i++)
          if (line[i] == 0)
            throw new BadInputException(name + ": line " + lineNo + ": a NUL byte; the file looks like UTF-16 or binary; save it as UTF-8");
        ByteBuffer src = ByteBuffer.wrap(line, from, line.length - from);
        CharBuffer out = CharBuffer.allocate(line.length - from);
        CoderResult r = decoder.reset().decode(src, out, true);
        if (!r.isError()) r = decoder.flush(out);
        if (r.isError()) {
          int at = src.position();
          String before = new String(line, from, at - from, StandardCharsets.UTF_8);
          throw new BadInputException(name + ": line " + lineNo + ": not UTF-8 (byte 0x" + String.format("%02X", line[at] & 0xFF)
              + " after '" + Snippet.of(before.substring(Math.max(0, before.length() - 20))) + "'); the file may be Latin-1 or "
              + "Windows-1252: save it as UTF-8");
        }
        chars = out.flip();
        if (chars.hasRemaining()) return true;
      }
      return false;
    }
  }
}
