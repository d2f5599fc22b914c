package io.actindex.encode.io;

import io.actindex.core.BadInputException;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * A minimal JSON parser (RFC 8259) for safetensors headers: objects become {@link LinkedHashMap}
 * (key order kept), arrays {@link List}, numbers {@link Long} when integral else {@link Double},
 * strings, booleans and {@code null}. Written here because the header is small and a JSON library
 * would be the module's only other dependency. Errors throw {@link IllegalArgumentException} with
 * the character offset; callers wrap it with the file name.
 */
public final class Json {
  private final String s;
  private int pos;

  private Json(String s) {
    this.s = s;
  }

  /** Parses one JSON value that fills {@code text} (surrounding whitespace allowed). */
  public static Object parse(String text) {
    Json p = new Json(text);
    p.ws();
    Object v = p.value(0);
    p.ws();
    if (p.pos != text.length()) throw p.error("unexpected text after the value");
    return v;
  }

  private Object value(int depth) {
    if (depth > 64) throw error("nesting deeper than 64");
    if (pos >= s.length()) throw error("unexpected end");
    char c = s.charAt(pos);
    return switch (c) {
      case '{' -> object(depth);
      case '[' -> array(depth);
      case '"' -> string();
      case 't' -> literal("true", Boolean.TRUE);
      case 'f' -> literal("false", Boolean.FALSE);
      case 'n' -> literal("null", null);
      default -> {
        if (c == '-' || (c >= '0' && c <= '9')) yield number();
        throw error("unexpected character " + BadInputException.quote(String.valueOf(c)));
      }
    };
  }

  private Map<String, Object> object(int depth) {
    Map<String, Object> m = new LinkedHashMap<>();
    pos++;
    ws();
    if (peek() == '}') {
      pos++;
      return m;
    }
    while (true) {
      ws();
      if (peek() != '"') throw error("expected a string key");
      String k = string();
      ws();
      expect(':');
      ws();
      if (m.containsKey(k)) throw error("duplicate key " + BadInputException.quote(k));
      m.put(k, value(depth + 1));
      ws();
      char c = next();
      if (c == '}') return m;
      if (c != ',') throw error("expected ',' or '}'");
    }
  }

  private List<Object> array(int depth) {
    List<Object> l = new ArrayList<>();
    pos++;
    ws();
    if (peek() == ']') {
      pos++;
      return l;
    }
    while (true) {
      ws();
      l.add(value(depth + 1));
      ws();
      char c = next();
      if (c == ']') return l;
      if (c != ',') throw error("expected ',' or ']'");
    }
  }

  private String string() {
    expect('"');
    StringBuilder sb = new StringBuilder();
    while (true) {
      char c = next();
      if (c == '"') return sb.toString();
      if (c < 0x20) throw error("control character in string");
      if (c != '\\') {
        sb.append(c);
        continue;
      }
      char e = next();
      switch (e) {
        case '"', '\\', '/' -> sb.append(e);
        case 'b' -> sb.append('\b');
        case 'f' -> sb.append('\f');
        case 'n' -> sb.append('\n');
        case 'r' -> sb.append('\r');
        case 't' -> sb.append('\t');
        case 'u' -> {
          if (pos + 4 > s.length()) throw error("short \\u escape");
          try {
            sb.append((char) Integer.parseInt(s.substring(pos, pos + 4), 16));
          } catch (NumberFormatException ex) {
            throw error("bad \\u escape");
          }
          pos += 4;
        }
        default -> throw error("bad escape " + BadInputException.quote("\\" + e));
      }
    }
  }

  private Object number() {
    int start = pos;
    if (peek() == '-') pos++;
    while (pos < s.length() && "0123456789+-.eE".indexOf(s.charAt(pos)) >= 0) pos++;
    String t = s.substring(start, pos);
    try {
      if (t.indexOf('.') < 0 && t.indexOf('e') < 0 && t.indexOf('E') < 0) return Long.parseLong(t);
      return Double.parseDouble(t);
    } catch (NumberFormatException e) {
      pos = start;
      throw error("bad number " + BadInputException.quote(t));
    }
  }

  private Object literal(String word, Object v) {
    if (!s.startsWith(word, pos)) throw error("unexpected token");
    pos += word.length();
    return v;
  }

  private void ws() {
    while (pos < s.length() && " \t\r\n".indexOf(s.charAt(pos)) >= 0) pos++;
  }

  private char peek() {
    return pos < s.length() ? s.charAt(pos) : '\0';
  }

  private char next() {
    if (pos >= s.length()) throw error("unexpected end");
    return s.charAt(pos++);
  }

  private void expect(char c) {
    if (next() != c) {
      pos--;
      throw error("expected '" + c + "'");
    }
  }

  private IllegalArgumentException error(String what) {
    return new IllegalArgumentException(what + " at character " + pos);
  }

  /** Writes strings as a JSON array of string literals. */
  public static String quote(List<String> values) {
    StringBuilder sb = new StringBuilder("[");
    for (String v : values) sb.append(sb.length() > 1 ? "," : "").append(quote(v));
    return sb.append(']').toString();
  }

  /** Writes a string as a JSON string literal. */
  public static String quote(String v) {
    StringBuilder sb = new StringBuilder("\"");
    for (char c : v.toCharArray()) {
      switch (c) {
        case '"' -> sb.append("\\\"");
        case '\\' -> sb.append("\\\\");
        case '\n' -> sb.append("\\n");
        case '\r' -> sb.append("\\r");
        case '\t' -> sb.append("\\t");
        default -> {
          if (c < 0x20) sb.append(String.format("\\u%04x", (int) c));
          else sb.append(c);
        }
      }
    }
    return sb.append('"').toString();
  }
}
