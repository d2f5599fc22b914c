package io.actindex.bench;

import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * A minimal JSON reader for JMH's result file (RFC 8259 values: objects become
 * {@code LinkedHashMap}, arrays {@code ArrayList}, numbers {@code Double}, plus String, Boolean
 * and null). JMH writes {@code "NaN"} as a string; {@link #number} accepts both.
 */
public final class Json {
  private final String s;
  private int i;

  private Json(String s) {
    this.s = s;
  }

  public static Object parse(String text) {
    Json p = new Json(text);
    Object v = p.value();
    p.ws();
    if (p.i != text.length()) throw p.error("trailing text");
    return v;
  }

  /** A number given as a JSON number or as a string such as "NaN". */
  public static double number(Object v) {
    if (v instanceof Double d) return d;
    if (v instanceof String str) return Double.parseDouble(str);
    return Double.NaN;
  }

  private Object value() {
    ws();
    if (i >= s.length()) throw error("unexpected end");
    char c = s.charAt(i);
    switch (c) {
      case '{': return object();
      case '[': return array();
      case '"': return string();
      default:
        if (s.startsWith("true", i)) { i += 4; return Boolean.TRUE; }
        if (s.startsWith("false", i)) { i += 5; return Boolean.FALSE; }
        if (s.startsWith("null", i)) { i += 4; return null; }
        return num();
    }
  }

  private Map<String, Object> object() {
    Map<String, Object> m = new LinkedHashMap<>();
    i++;
    ws();
    if (peek() == '}') { i++; return m; }
    while (true) {
      ws();
      if (peek() != '"') throw error("expected a key");
      String key = string();
      ws();
      if (peek() != ':') throw error("expected ':'");
      i++;
      m.put(key, value());
      ws();
      char c = peek();
      i++;
      if (c == '}') return m;
      if (c != ',') throw error("expected ',' or '}'");
    }
  }

  private List<Object> array() {
    List<Object> a = new ArrayList<>();
    i++;
    ws();
    if (peek() == ']') { i++; return a; }
    while (true) {
      a.add(value());
      ws();
      char c = peek();
      i++;
      if (c == ']') return a;
      if (c != ',') throw error("expected ',' or ']'");
    }
  }

  private String string() {
    StringBuilder sb = new StringBuilder();
    i++;
    while (true) {
      if (i >= s.length()) throw error("unterminated string");
      char c = s.charAt(i++);
      if (c == '"') return sb.toString();
      if (c != '\\') { sb.append(c); continue; }
      char e = s.charAt(i++);
      switch (e) {
        case 'n' -> sb.append('\n');
        case 't' -> sb.append('\t');
        case 'r' -> sb.append('\r');
        case 'b' -> sb.append('\b');
        case 'f' -> sb.append('\f');
        case 'u' -> { sb.append((char) Integer.parseInt(s.substring(i, i + 4), 16)); i += 4; }
        default -> sb.append(e);
      }
    }
  }

  private Double num() {
    int start = i;
    while (i < s.length() && "+-0123456789.eE".indexOf(s.charAt(i)) >= 0) i++;
    if (start == i) throw error("unexpected character '" + s.charAt(i) + "'");
    return Double.parseDouble(s.substring(start, i));
  }

  private char peek() {
    if (i >= s.length()) throw error("unexpected end");
    return s.charAt(i);
  }

  private void ws() {
    while (i < s.length() && Character.isWhitespace(s.charAt(i))) i++;
  }

  private IllegalArgumentException error(String what) {
    return new IllegalArgumentException("JSON: " + what + " at character " + i);
  }
}
