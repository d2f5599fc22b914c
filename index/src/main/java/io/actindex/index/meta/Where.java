package io.actindex.index.meta;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.IdSet;
import io.actindex.core.Names;
import io.actindex.index.meta.MetaStore.FieldKind;
import java.util.ArrayList;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.TreeSet;
import java.util.function.UnaryOperator;
import org.apache.lucene.document.DoublePoint;
import org.apache.lucene.index.Term;
import org.apache.lucene.search.BooleanClause.Occur;
import org.apache.lucene.search.BooleanQuery;
import org.apache.lucene.search.MatchAllDocsQuery;
import org.apache.lucene.search.Query;
import org.apache.lucene.search.TermInSetQuery;
import org.apache.lucene.search.TermQuery;
import org.apache.lucene.util.BytesRef;

/**
 * A metadata filter ("where-expression"): {@link #select} gives the live ids it matches as an {@link
 * IdSet}, the search filter of {@code IndexReader.search}. Inside, the expression is parsed into a
 * Lucene query over the metadata fields, which the store runs; the query never leaves this package
 * (no public signature of the library names a Lucene type).
 *
 * <pre>
 * expr       := orExpr
 * orExpr     := andExpr ( "or" andExpr )*
 * andExpr    := notExpr ( "and" notExpr )*
 * notExpr    := "not" notExpr | "(" expr ")" | comparison
 * comparison := FIELD op VALUE | FIELD [ "not" ] "in" "(" VALUE ( "," VALUE )* ")"
 * FIELD      := bare word | 'single quoted' | "double quoted"
 * op         := "=" | "!=" | "&lt;" | "&lt;=" | "&gt;" | "&gt;="
 * VALUE      := bare word | 'single quoted' | "double quoted"   (backslash escapes the quote)
 * </pre>
 *
 * Keywords ({@code and or not in}) are case-insensitive; field names are not. A bare word is any
 * run of characters other than spaces, quotes, parentheses, commas, {@code = ! < >}; quote values
 * that hold those or that spell a keyword, and field names alike (a metadata column may be named
 * {@code and} or {@code night shift}). On a NUMBER field the value must parse as a number and
 * {@code = != < <= > >=} compare numerically; on a KEYWORD field only {@code =}, {@code !=} and
 * {@code in} are allowed and compare exact strings. {@code a != v} and {@code not ...} also match
 * examples that have no value for {@code a}. An unknown field or a syntax error is a {@link
 * BadInputException} that names the 1-based character position.
 *
 * <p>Limits, so that no input can overflow the stack or reach Lucene's clause limit: parentheses
 * and {@code not} nest at most {@link #MAX_NESTING} deep, and an expression holds at most {@link
 * #MAX_CLAUSES} comparisons and negations ({@code !=}, {@code not in} and {@code not} each count
 * one more). A list {@code in (...)} is one set query whatever its length.
 */
public final class Where {
  /** Deepest nesting of parentheses and {@code not}. */
  public static final int MAX_NESTING = 64;
  /** Most comparisons plus negations in one expression (Lucene refuses more than 1,024 clauses). */
  public static final int MAX_CLAUSES = 1000;

  private final String text;
  private final Map<String, FieldKind> fields;
  private final UnaryOperator<String> keys;
  private final List<Token> tokens;
  private int pos;
  private int depth;
  private int clauses;

  private Where(String text, Map<String, FieldKind> fields, UnaryOperator<String> keys) {
    this.text = text;
    this.fields = fields;
    this.keys = keys;
    this.tokens = tokenize(text);
  }

  /**
   * Parses {@code expr} against the given field kinds (the store's own query; callers use {@link
   * #select}); {@code keys} turns a value compared with {@code key} into the stored key it names
   * ({@link MetaStore#storedKey}).
   */
  static Query parse(String expr, Map<String, FieldKind> fields, UnaryOperator<String> keys) {
    if (expr == null || expr.isBlank()) throw new BadParameterException("where", ": the expression is empty; give no filter (null) to use every example");
    Where w = new Where(expr, fields, keys);
    Query q = w.or();
    if (w.peek().type != T.END) throw w.error(w.peek(), "expected 'and', 'or' or the end, found " + w.peek().describe());
    return q;
  }

  /**
   * The live ids that match {@code expr}, a set over {@code [0, maxId)} of the index {@code meta}
   * belongs to (so a search filter of its reader: build it once, use it for every query), or {@code
   * null} (no filter) when it is null. An empty or blank expression is refused like a syntax error,
   * never read as "every example" (a delete by an unset shell variable must not delete everything).
   */
  public static IdSet select(MetaStore meta, String expr) {
    if (expr == null) return null;
    return meta.select(parse(expr, meta.fields(), meta::storedKey));
  }

  // ---- grammar

  private Query or() {
    List<Query> parts = new ArrayList<>(List.of(and()));
    while (peekWord("or")) {
      pos++;
      parts.add(and());
    }
    if (parts.size() == 1) return parts.get(0);
    BooleanQuery.Builder b = new BooleanQuery.Builder().setMinimumNumberShouldMatch(1);
    for (Query q : parts) b.add(q, Occur.SHOULD);
    return b.build();
  }

  private Query and() {
    List<Query> parts = new ArrayList<>(List.of(not()));
    while (peekWord("and")) {
      pos++;
      parts.add(not());
    }
    if (parts.size() == 1) return parts.get(0);
    BooleanQuery.Builder b = new BooleanQuery.Builder();
    for (Query q : parts) b.add(q, Occur.FILTER);
    return b.build();
  }

  private Query not() {
    Token t = peek();
    if (peekWord("not")) {
      pos++;
      enter(t);
      Query q = negate(not(), t);
      depth--;
      return q;
    }
    if (t.type == T.LPAREN) {
      pos++;
      enter(t);
      Query q = or();
      expect(T.RPAREN, "')'");
      depth--;
      return q;
    }
    return comparison();
  }

  private void enter(Token t) {
    if (++depth > MAX_NESTING)
      throw error(t, "parentheses and 'not' nest more than " + MAX_NESTING + " deep; simplify the expression");
  }

  /** Counts one Lucene clause made at token {@code t}. */
  private void clause(Token t) {
    if (++clauses > MAX_CLAUSES)
      throw error(t, "more than " + MAX_CLAUSES + " comparisons and negations; use FIELD in (v1, v2, ...) for long lists of values");
  }

  private Query comparison() {
    Token field = next();
    if (field.type != T.STRING && (field.type != T.WORD || isKeyword(field.text)))
      throw error(field, "expected a field name, found " + field.describe()
          + (field.type == T.WORD && fieldName(field.text) != null ? " (a field named like a keyword is written in quotes: '" + field.text + "')" : ""));
    String name = fieldName(field.text);
    if (name == null)
      throw error(field, "unknown field '" + snippet(field.text) + "'; known fields: " + String.join(", ", new TreeSet<>(fields.keySet())));
    FieldKind kind = fields.get(name);
    boolean negated = false;
    if (peekWord("not")) {
      pos++;
      negated = true;
      if (!peekWord("in")) throw error(peek(), "expected 'in' after 'not', found " + peek().describe());
    }
    clause(field);
    if (peekWord("in")) {
      Token in = next();
      expect(T.LPAREN, "'(' after 'in'");
      Query q = inQuery(name, kind);
      return negated ? negate(q, in) : q;
    }
    Token op = next();
    if (op.type != T.OP) throw error(op, "expected = != < <= > >= or 'in' after '" + field.text + "', found " + op.describe());
    Token v = value();
    return switch (op.text) {
      case "=" -> equalsQuery(name, kind, v);
      case "!=" -> negate(equalsQuery(name, kind, v), op);
      default -> {
        if (kind != FieldKind.NUMBER)
          throw error(op, "'" + op.text + "' needs a number field; '" + name + "' holds text (use = != in)");
        double x = number(v);
        yield switch (op.text) {
          case "<" -> DoublePoint.newRangeQuery(name, Double.NEGATIVE_INFINITY, Math.nextDown(low(x)));
          case "<=" -> DoublePoint.newRangeQuery(name, Double.NEGATIVE_INFINITY, high(x));
          case ">" -> DoublePoint.newRangeQuery(name, Math.nextUp(high(x)), Double.POSITIVE_INFINITY);
          default -> DoublePoint.newRangeQuery(name, low(x), Double.POSITIVE_INFINITY);
        };
      }
    };
  }

  /** The stored field {@code typed} names: itself, else the one that is the same name in another Unicode form ({@link Names}); null if none. */
  private String fieldName(String typed) {
    if (fields.containsKey(typed)) return typed;
    for (String f : fields.keySet()) if (Names.same(f, typed)) return f;
    return null;
  }

  private Query equalsQuery(String field, FieldKind kind, Token v) {
    if (field.equals(MetaSchema.KEY)) return new TermQuery(new Term(field, keys.apply(v.text))); // the key delete would take
    if (kind != FieldKind.NUMBER) return new TermQuery(new Term(field, v.text));
    double x = number(v);
    return DoublePoint.newRangeQuery(field, low(x), high(x));
  }

  /*
   * Points compare doubles by their bits, where -0.0 sorts just below 0.0; as numbers they are
   * equal (a file may hold "-0.0", a user may type -0). A value's bounds: both zeros for a zero.
   */
  private static double low(double x) {
    return x == 0 ? -0.0 : x;
  }

  private static double high(double x) {
    return x == 0 ? 0.0 : x;
  }

  /** The values of {@code in (v1, v2, ...)} after the '(' as one set query (one clause, any length). */
  private Query inQuery(String field, FieldKind kind) {
    List<Token> values = new ArrayList<>(List.of(value()));
    while (peek().type == T.COMMA) {
      pos++;
      values.add(value());
    }
    expect(T.RPAREN, "',' or ')'");
    if (values.size() == 1) return equalsQuery(field, kind, values.get(0));
    if (kind == FieldKind.NUMBER) {
      java.util.stream.DoubleStream.Builder xs = java.util.stream.DoubleStream.builder();
      for (Token v : values) {
        double x = number(v);
        xs.add(low(x)).add(high(x)); // a zero: both zeros
      }
      return DoublePoint.newSetQuery(field, xs.build().distinct().toArray());
    }
    LinkedHashSet<BytesRef> terms = new LinkedHashSet<>();
    for (Token v : values) terms.add(new BytesRef(field.equals(MetaSchema.KEY) ? keys.apply(v.text) : v.text));
    return new TermInSetQuery(field, terms);
  }

  /** Everything except {@code q}'s matches (also the examples without a value); one more clause. */
  private Query negate(Query q, Token at) {
    clause(at);
    return new BooleanQuery.Builder().add(MatchAllDocsQuery.INSTANCE, Occur.FILTER).add(q, Occur.MUST_NOT).build();
  }

  private double number(Token v) {
    if (MetaStore.exactNumber(v.text)) return Double.parseDouble(v.text);
    // a decimal that a double only rounds would match the neighbours of what was asked for
    boolean rounded = isDecimal(v.text) && Double.isFinite(Double.parseDouble(v.text));
    throw error(v, "'" + snippet(v.text) + "' is not a number"
        + (rounded ? " a number field holds exactly (a double: about 15-17 significant digits)" : ""));
  }

  private static boolean isDecimal(String text) {
    try {
      new java.math.BigDecimal(text);
      return true;
    } catch (NumberFormatException e) {
      return false;
    }
  }

  private Token value() {
    Token v = next();
    if (v.type == T.STRING || (v.type == T.WORD && !isKeyword(v.text))) return v;
    throw error(v, "expected a value, found " + v.describe());
  }

  // ---- tokens

  private enum T { WORD, STRING, OP, LPAREN, RPAREN, COMMA, END }

  private record Token(T type, String text, int at) {
    String describe() {
      return type == T.END ? "the end" : "'" + snippet(text) + "'";
    }
  }

  private Token peek() {
    return tokens.get(pos);
  }

  private Token next() {
    Token t = tokens.get(pos);
    if (t.type != T.END) pos++;
    return t;
  }

  private boolean peekWord(String keyword) {
    Token t = peek();
    return t.type == T.WORD && t.text.equalsIgnoreCase(keyword);
  }

  private void expect(T type, String what) {
    Token t = next();
    if (t.type != type) throw error(t, "expected " + what + ", found " + t.describe());
  }

  private static boolean isKeyword(String s) {
    return s.equalsIgnoreCase("and") || s.equalsIgnoreCase("or") || s.equalsIgnoreCase("not") || s.equalsIgnoreCase("in");
  }

  /** {@code text} escaped and cut for a message, as the query module's {@code Snippet} does (60 characters). */
  private static String snippet(String text) {
    return snippet(text, 60);
  }

  private static String snippet(String text, int max) {
    return BadInputException.snippet(text, max);
  }

  private BadParameterException error(Token t, String message) {
    return new BadParameterException("where", ": at position " + (t.at + 1) + ": " + message + " in: " + snippet(text, 100));
  }

  private List<Token> tokenize(String s) {
    List<Token> out = new ArrayList<>();
    int i = 0, n = s.length();
    while (i < n) {
      char c = s.charAt(i);
      if (Character.isWhitespace(c)) {
        i++;
      } else if (c == '(' || c == ')' || c == ',') {
        out.add(new Token(c == '(' ? T.LPAREN : c == ')' ? T.RPAREN : T.COMMA, String.valueOf(c), i));
        i++;
      } else if (c == '=' || c == '!' || c == '<' || c == '>') {
        int start = i++;
        if (i < n && s.charAt(i) == '=') i++;
        String op = s.substring(start, i);
        if (op.equals("!")) throw new BadParameterException("where", ": at position " + (start + 1) + ": '!' must be followed by '=' in: " + snippet(s, 100));
        if (op.equals("==")) op = "=";
        out.add(new Token(T.OP, op, start));
      } else if (c == '\'' || c == '"') {
        int start = i++;
        StringBuilder b = new StringBuilder();
        while (true) {
          if (i >= n) throw new BadParameterException("where", ": at position " + (start + 1) + ": quote never closed in: " + snippet(s, 100));
          char d = s.charAt(i++);
          if (d == c) break;
          if (d == '\\' && i < n) d = s.charAt(i++);
          b.append(d);
        }
        out.add(new Token(T.STRING, b.toString(), start));
      } else {
        int start = i;
        while (i < n && !Character.isWhitespace(s.charAt(i)) && "()',\"=!<>".indexOf(s.charAt(i)) < 0) i++;
        out.add(new Token(T.WORD, s.substring(start, i), start));
      }
    }
    out.add(new Token(T.END, "", n));
    return out;
  }
}
