package io.actindex.cli.format;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.util.ArrayDeque;
import java.util.Deque;
import java.util.Map;

/**
 * A small streaming JSON writer (RFC 8259): objects, arrays, strings, integers, finite doubles,
 * booleans and null, written compactly to an {@link Appendable}. Strings are escaped as section 7
 * of RFC 8259 requires (quotation mark, reverse solidus, U+0000..U+001F); lone surrogates are
 * written as {@code \\uXXXX} escapes so the output stays valid UTF-8. Non-finite doubles become
 * {@code null} (JSON has no NaN). Misuse (a value where a name is expected, unbalanced ends)
 * throws {@link IllegalStateException}. Not thread-safe.
 */
public final class JsonWriter {
  private enum Ctx { OBJECT, ARRAY }

  private final Appendable out;
  private final Deque<Ctx> stack = new ArrayDeque<>();
  private boolean first = true;      // no element written yet in the current container
  private boolean afterName;         // a name was written, its value is due
  private boolean done;              // the top-level value is complete

  public JsonWriter(Appendable out) {
    this.out = out;
  }

  public JsonWriter beginObject() {
    beforeValue();
    raw('{');
    stack.push(Ctx.OBJECT);
    first = true;
    return this;
  }

  public JsonWriter endObject() {
    return end(Ctx.OBJECT, '}');
  }

  public JsonWriter beginArray() {
    beforeValue();
    raw('[');
    stack.push(Ctx.ARRAY);
    first = true;
    return this;
  }

  public JsonWriter endArray() {
    return end(Ctx.ARRAY, ']');
  }

  /** The name of the next member of the current object. */
  public JsonWriter name(String name) {
    if (stack.peek() != Ctx.OBJECT || afterName) throw new IllegalStateException("a name is not expected here");
    if (!first) raw(',');
    first = false;
    string(name);
    raw(':');
    afterName = true;
    return this;
  }

  public JsonWriter value(String s) {
    if (s == null) return nullValue();
    beforeValue();
    string(s);
    return scalarDone();
  }

  public JsonWriter value(long v) {
    beforeValue();
    raw(Long.toString(v));
    return scalarDone();
  }

  /** A finite double as {@link #number}; NaN and infinities as null. */
  public JsonWriter value(double v) {
    if (!Double.isFinite(v)) return nullValue();
    beforeValue();
    raw(number(v));
    return scalarDone();
  }

  /**
   * The text of a finite double in JSON and in CSV cells ({@link CsvWriter#number}): the shortest
   * form that reads back to the same value, a whole number below 1e15 without a fraction ({@code
   * 27}, not {@code 27.0}).
   */
  public static String number(double v) {
    if (v == Math.rint(v) && Math.abs(v) < 1e15) return Long.toString((long) v);
    return Double.toString(v);
  }

  public JsonWriter value(boolean v) {
    beforeValue();
    raw(v ? "true" : "false");
    return scalarDone();
  }

  public JsonWriter nullValue() {
    beforeValue();
    raw("null");
    return scalarDone();
  }

  /** Writes {@code name: value} for a string value (null allowed). */
  public JsonWriter member(String name, String value) {
    return name(name).value(value);
  }

  public JsonWriter member(String name, long value) {
    return name(name).value(value);
  }

  public JsonWriter member(String name, double value) {
    return name(name).value(value);
  }

  /** Writes {@code name: value} for a number that may be absent: null as {@code null}, whole types as {@link #value(long)}, others as {@link #value(double)}. */
  public JsonWriter member(String name, Number value) {
    name(name);
    if (value == null) return nullValue();
    return value instanceof Integer || value instanceof Long || value instanceof Short || value instanceof Byte
        ? value(value.longValue()) : value(value.doubleValue());
  }

  /** An object of string values, in the map's iteration order. */
  public JsonWriter stringMap(Map<String, String> map) {
    beginObject();
    for (Map.Entry<String, String> e : map.entrySet()) member(e.getKey(), e.getValue());
    return endObject();
  }

  /** True once one complete top-level value has been written. */
  public boolean isComplete() {
    return done;
  }

  private JsonWriter end(Ctx ctx, char c) {
    if (stack.peek() != ctx || afterName) throw new IllegalStateException("cannot close " + ctx + " here");
    stack.pop();
    raw(c);
    first = false;
    if (stack.isEmpty()) done = true;
    return this;
  }

  private void beforeValue() {
    if (done) throw new IllegalStateException("the document is already complete");
    Ctx ctx = stack.peek();
    if (ctx == Ctx.OBJECT) {
      if (!afterName) throw new IllegalStateException("an object member needs a name first");
      afterName = false;
      first = false;
    } else if (ctx == Ctx.ARRAY) {
      if (!first) raw(',');
      first = false;
    }
  }

  private void string(String s) {
    StringBuilder sb = new StringBuilder(s.length() + 2).append('"');
    for (int i = 0; i < s.length(); i++) {
      char c = s.charAt(i);
      switch (c) {
        case '"' -> sb.append("\\\"");
        case '\\' -> sb.append("\\\\");
        case '\n' -> sb.append("\\n");
        case '\r' -> sb.append("\\r");
        case '\t' -> sb.append("\\t");
        case '\b' -> sb.append("\\b");
        case '\f' -> sb.append("\\f");
        default -> {
          boolean loneSurrogate = Character.isSurrogate(c)
              && !(Character.isHighSurrogate(c) && i + 1 < s.length() && Character.isLowSurrogate(s.charAt(i + 1)))
              && !(Character.isLowSurrogate(c) && i > 0 && Character.isHighSurrogate(s.charAt(i - 1)));
          if (c < 0x20 || loneSurrogate) sb.append(String.format("\\u%04x", (int) c));
          else sb.append(c);
        }
      }
    }
    raw(sb.append('"'));
  }

  /** A scalar written at top level completes the document. */
  private JsonWriter scalarDone() {
    if (stack.isEmpty()) done = true;
    return this;
  }

  private void raw(CharSequence s) {
    try {
      out.append(s);
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  private void raw(char c) {
    try {
      out.append(c);
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }
}
