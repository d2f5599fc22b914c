package io.actindex.index.meta;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.BadInputException;
import io.actindex.core.Randoms;
import io.actindex.index.meta.MetaStore.FieldKind;
import java.io.IOException;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.function.Predicate;
import org.apache.lucene.document.Document;
import org.apache.lucene.document.DoublePoint;
import org.apache.lucene.document.Field;
import org.apache.lucene.document.StoredField;
import org.apache.lucene.document.StringField;
import org.apache.lucene.index.DirectoryReader;
import org.apache.lucene.index.IndexWriterConfig;
import org.apache.lucene.search.IndexSearcher;
import org.apache.lucene.search.Query;
import org.apache.lucene.search.ScoreDoc;
import org.apache.lucene.store.ByteBuffersDirectory;
import org.junit.jupiter.api.Test;
import org.roaringbitmap.RoaringBitmap;

/**
 * Random where-expressions, each generated together with an equivalent Java predicate, give the
 * same rows through Lucene as the predicate gives on a direct scan of the metadata rows. The rows
 * are indexed here as the metadata store documents it: KEYWORD columns as exact strings, NUMBER
 * columns as double points.
 */
class WhereTest {
  static final Map<String, FieldKind> FIELDS = Map.of("label", FieldKind.KEYWORD, "split", FieldKind.KEYWORD,
      "score", FieldKind.NUMBER, "source", FieldKind.KEYWORD, "n", FieldKind.NUMBER);
  static final String[] LABELS = {"cat", "dog", "and", "big cat", "x'y"};
  static final String[] SPLITS = {"train", "test", "val"};
  static final String[] SOURCES = {"a", "b", "c-1"};

  record Row(String label, String split, Double score, String source, Double n) {}

  @Test
  void randomExpressionsMatchADirectScan() throws IOException {
    for (int rep = 0; rep < 30; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      List<Row> rows = rows(rnd, 60 + rnd.nextInt(60));
      try (ByteBuffersDirectory dir = index(rows); DirectoryReader reader = DirectoryReader.open(dir)) {
        IndexSearcher searcher = new IndexSearcher(reader);
        for (int e = 0; e < 20; e++) {
          Expr ex = expr(rnd, 3);
          assertEquals(scan(rows, ex.test), search(searcher, Where.parse(ex.text, FIELDS, MetaStore::key), rows.size()),
              ex.text + " " + Randoms.describe(seed));
        }
      }
    }
  }

  /** The same through the real metadata store, whose column kinds come from the data. */
  @Test
  void throughTheMetadataStore(@org.junit.jupiter.api.io.TempDir java.nio.file.Path tmp) {
    long seed = Randoms.seed(77);
    SplittableRandom rnd = new SplittableRandom(seed);
    List<Row> rows = rows(rnd, 150);
    List<Map<String, String>> meta = new ArrayList<>();
    for (int i = 0; i < rows.size(); i++) {
      Row r = rows.get(i);
      Map<String, String> m = new java.util.HashMap<>();
      m.put("key", "k" + i);
      if (r.label != null) m.put("label", r.label);
      if (r.split != null) m.put("split", r.split);
      if (r.source != null) m.put("source", r.source);
      if (r.score != null) m.put("score", Double.toString(r.score));
      if (r.n != null) m.put("n", Double.toString(r.n));
      meta.add(m);
    }
    write(tmp, io.actindex.core.SyntheticCodes.uniform(rows.size(), 8, seed), meta, 2);
    try (io.actindex.index.store.IndexReader reader = io.actindex.index.store.IndexReader.open(tmp)) {
      Map<String, FieldKind> withKey = new java.util.HashMap<>(FIELDS);
      withKey.put("key", FieldKind.KEYWORD);
      assertEquals(withKey, reader.meta().fields());
      for (int e = 0; e < 40; e++) {
        Expr ex = expr(rnd, 3);
        RoaringBitmap want = new RoaringBitmap();
        for (int i = 0; i < rows.size(); i++) if (ex.test.test(rows.get(i))) want.add(i);
        assertEquals(want, select(reader, ex.text), ex.text + " " + Randoms.describe(seed));
      }
      assertEquals(null, select(reader, null));
      for (String blank : new String[] {"", " ", "\t\n"}) // never "every example": a delete by an unset variable would take all
        assertThatThrownBy(() -> select(reader, blank)).as("'" + blank + "'").isInstanceOf(BadInputException.class)
            .hasMessageContaining("the expression is empty");
    }
  }

  /**
   * Numbers a double cannot hold exactly (integers past 2^53, such as 64-bit ids or nanosecond
   * timestamps): a column of them used to become a number field whose values were rounded, so
   * {@code ts = 9007199254740993} also matched 9007199254740992. Such a column is text now (exact
   * equality), and a comparison value a number field cannot hold exactly is refused.
   */
  @Test
  void numbersADoubleCannotHoldExactlyNeverMatchTheWrongRows(@org.junit.jupiter.api.io.TempDir java.nio.file.Path tmp) {
    String[] ts = {"9007199254740992", "9007199254740993", "9007199254740994", "1733234567890123456"};
    List<Map<String, String>> meta = new ArrayList<>();
    for (int i = 0; i < ts.length; i++) meta.add(Map.of("key", "k" + i, "ts", ts[i], "n", i == 0 ? "1.5" : "2e3"));
    write(tmp, io.actindex.core.SyntheticCodes.uniform(ts.length, 8, 1), meta, 1);
    try (io.actindex.index.store.IndexReader reader = io.actindex.index.store.IndexReader.open(tmp)) {
      assertThat(reader.meta().fields()).containsEntry("ts", FieldKind.KEYWORD).containsEntry("n", FieldKind.NUMBER);
      for (int i = 0; i < ts.length; i++) assertThat(select(reader, "ts = " + ts[i])).as(ts[i]).isEqualTo(RoaringBitmap.bitmapOf(i));
      assertThat(select(reader, "n = 2000")).isEqualTo(RoaringBitmap.bitmapOf(1, 2, 3));
      for (String bad : new String[] {"n = 9007199254740993", "n < 1e-400", "n in (1.5, 12345678901234567890)"})
        assertThatThrownBy(() -> select(reader, bad)).as(bad).isInstanceOf(BadInputException.class).hasMessageContaining("exactly");
    }
  }

  /**
   * A metadata column may be named like a keyword ({@code and}, {@code IN}) or hold spaces and
   * symbols ({@code night shift}, {@code rpm (avg)}): build and add take such columns, and a field
   * name in quotes reaches them. As a bare word a keyword-named field was refused, and a spaced
   * name could not be written at all.
   */
  @Test
  void quotedFieldNamesReachColumnsNamedLikeKeywordsOrWithSpaces(@org.junit.jupiter.api.io.TempDir java.nio.file.Path tmp) {
    List<Map<String, String>> meta = new ArrayList<>();
    for (int i = 0; i < 6; i++)
      meta.add(Map.of("key", "k" + i, "and", i % 2 == 0 ? "x" : "y", "IN", "v" + (i % 3), "night shift", Integer.toString(i), "rpm (avg)", "r" + i));
    write(tmp, io.actindex.core.SyntheticCodes.uniform(meta.size(), 8, 1), meta, 2);
    try (io.actindex.index.store.IndexReader reader = io.actindex.index.store.IndexReader.open(tmp)) {
      assertThat(select(reader, "'and' = x")).isEqualTo(RoaringBitmap.bitmapOf(0, 2, 4));
      assertThat(select(reader, "\"and\" != x and 'IN' in (v0, v1)")).isEqualTo(RoaringBitmap.bitmapOf(1, 3));
      assertThat(select(reader, "'IN' not in (v0)")).isEqualTo(RoaringBitmap.bitmapOf(1, 2, 4, 5));
      assertThat(select(reader, "'night shift' >= 4 or 'rpm (avg)' = r0")).isEqualTo(RoaringBitmap.bitmapOf(0, 4, 5));
      assertThat(select(reader, "not 'night shift' < 5")).isEqualTo(RoaringBitmap.bitmapOf(5));
      assertThatThrownBy(() -> select(reader, "and = x")).isInstanceOf(BadInputException.class)
          .hasMessageContaining("position 1").hasMessageContaining("written in quotes: 'and'");
      assertThatThrownBy(() -> select(reader, "'night' = 1")).isInstanceOf(BadInputException.class)
          .hasMessageContaining("unknown field 'night'");
    }
  }

  /**
   * Negative zero equals zero: NumPy and pandas write "-0.0" for it, and a user may type "-0". The
   * filter compared the points' bits, so {@code n = 0} missed rows stored as -0.0, {@code n = -0}
   * and {@code n <= -0} missed the rows stored as 0, and {@code n != -0} kept them.
   */
  @Test
  void negativeZeroIsZeroOnBothSides(@org.junit.jupiter.api.io.TempDir java.nio.file.Path tmp) {
    String[] n = {"-0.0", "0", "0.0", "-1", "2", "-0"};
    List<Map<String, String>> meta = new ArrayList<>();
    for (int i = 0; i < n.length; i++) meta.add(Map.of("key", "k" + i, "n", n[i]));
    write(tmp, io.actindex.core.SyntheticCodes.uniform(n.length, 8, 1), meta, 1);
    RoaringBitmap zeros = RoaringBitmap.bitmapOf(0, 1, 2, 5), negative = RoaringBitmap.bitmapOf(3), positive = RoaringBitmap.bitmapOf(4);
    try (io.actindex.index.store.IndexReader reader = io.actindex.index.store.IndexReader.open(tmp)) {
      for (String z : new String[] {"0", "-0", "0.0", "-0.0", "-0e5"}) {
        assertThat(select(reader, "n = " + z)).as("= " + z).isEqualTo(zeros);
        assertThat(select(reader, "n in (" + z + ")")).as("in " + z).isEqualTo(zeros);
        assertThat(select(reader, "n in (" + z + ", 2)")).as("in " + z + ", 2").isEqualTo(RoaringBitmap.or(zeros, positive));
        assertThat(select(reader, "n != " + z)).as("!= " + z).isEqualTo(RoaringBitmap.or(negative, positive));
        assertThat(select(reader, "n < " + z)).as("< " + z).isEqualTo(negative);
        assertThat(select(reader, "n <= " + z)).as("<= " + z).isEqualTo(RoaringBitmap.or(zeros, negative));
        assertThat(select(reader, "n > " + z)).as("> " + z).isEqualTo(positive);
        assertThat(select(reader, "n >= " + z)).as(">= " + z).isEqualTo(RoaringBitmap.or(zeros, positive));
      }
    }
  }

  @Test
  void documentedExampleMatchesItsMeaning() throws IOException {
    List<Row> rows = List.of(new Row("cat", "train", 0.7, "a", 1.0), new Row("cat", "test", 0.9, "a", 1.0),
        new Row("cat", "val", 0.1, "b", 1.0), new Row("cat", "val", 0.2, "c-1", 1.0), new Row("dog", "train", 0.9, "a", 1.0),
        new Row("cat", null, null, null, null));
    try (ByteBuffersDirectory dir = index(rows); DirectoryReader reader = DirectoryReader.open(dir)) {
      IndexSearcher s = new IndexSearcher(reader);
      Query q = Where.parse("label = cat and split != test and (score >= 0.5 or source in (a, b))", FIELDS, MetaStore::key);
      List<String> got = new ArrayList<>();
      for (ScoreDoc sd : s.search(q, 10).scoreDocs) got.add(s.storedFields().document(sd.doc).get("row"));
      got.sort(null);
      assertEquals(List.of("0", "2"), got);
    }
  }

  @Test
  void errorsNameThePosition() {
    assertThatThrownBy(() -> Where.parse("label = cat and colour = red", FIELDS, MetaStore::key))
        .isInstanceOf(BadInputException.class).hasMessageContaining("position 17").hasMessageContaining("unknown field 'colour'");
    assertThatThrownBy(() -> Where.parse("label = cat and", FIELDS, MetaStore::key))
        .isInstanceOf(BadInputException.class).hasMessageContaining("position 16").hasMessageContaining("the end");
    assertThatThrownBy(() -> Where.parse("(label = cat", FIELDS, MetaStore::key)).hasMessageContaining("position 13").hasMessageContaining("')'");
    assertThatThrownBy(() -> Where.parse("score > high", FIELDS, MetaStore::key)).hasMessageContaining("position 9").hasMessageContaining("not a number");
    assertThatThrownBy(() -> Where.parse("label < cat", FIELDS, MetaStore::key)).hasMessageContaining("position 7").hasMessageContaining("number field");
    assertThatThrownBy(() -> Where.parse("label = 'cat", FIELDS, MetaStore::key)).hasMessageContaining("position 9").hasMessageContaining("quote");
    assertThatThrownBy(() -> Where.parse("label ! cat", FIELDS, MetaStore::key)).hasMessageContaining("position 7");
    assertThatThrownBy(() -> Where.parse("label in ()", FIELDS, MetaStore::key)).hasMessageContaining("position 11").hasMessageContaining("value");
    assertThatThrownBy(() -> Where.parse("label = cat dog", FIELDS, MetaStore::key)).hasMessageContaining("position 13");
    assertThatThrownBy(() -> Where.parse(" ", FIELDS, MetaStore::key)).isInstanceOf(BadInputException.class).hasMessageContaining("empty");
    assertThatThrownBy(() -> Where.parse("or label = cat", FIELDS, MetaStore::key)).hasMessageContaining("position 1").hasMessageContaining("field name");
  }

  @Test
  void keywordsAreCaseInsensitiveAndDoubleEqualsIsEquals() throws IOException {
    List<Row> rows = List.of(new Row("and", "train", 0.0, "a", 1.0), new Row("and", "train", 0.5, "a", 1.0),
        new Row("and", "train", null, "a", 1.0), new Row("cat", "train", 0.5, "a", 1.0));
    try (ByteBuffersDirectory dir = index(rows); DirectoryReader reader = DirectoryReader.open(dir)) {
      // row 2 has no score: 'score < 1e-3' does not hold for it, so its negation does
      assertEquals(List.of(1, 2), search(new IndexSearcher(reader), Where.parse("label == 'and' AND NOT score < 1e-3", FIELDS, MetaStore::key), 4));
    }
  }

  /** {@code in (...)} far past Lucene's 1,024-clause limit, on text and on numbers, and negated. */
  @Test
  void longInListsMatchADirectScan() throws IOException {
    for (int rep = 0; rep < 6; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      List<Row> rows = rows(rnd, 200);
      try (ByteBuffersDirectory dir = index(rows); DirectoryReader reader = DirectoryReader.open(dir)) {
        IndexSearcher searcher = new IndexSearcher(reader);
        int count = 1025 + rnd.nextInt(3000);
        java.util.Set<String> labels = new java.util.HashSet<>();
        java.util.Set<Double> scores = new java.util.HashSet<>();
        StringBuilder lt = new StringBuilder(), st = new StringBuilder();
        for (int i = 0; i < count; i++) {
          String l = rnd.nextInt(500) == 0 ? LABELS[rnd.nextInt(LABELS.length)] : "v" + rnd.nextInt(1 << 20);
          double x = rnd.nextInt(500) == 0 ? rnd.nextInt(11) / 10.0 : 2 + rnd.nextInt(1 << 20);
          labels.add(l);
          scores.add(x);
          lt.append(i == 0 ? "" : ", ").append(quote(l));
          st.append(i == 0 ? "" : ",").append(x);
        }
        boolean not = rnd.nextBoolean();
        String text = "label " + (not ? "not in" : "in") + " (" + lt + ") or score in (" + st + ")";
        Predicate<Row> test = r -> (not != labels.contains(r.label)) || (r.score != null && scores.contains(r.score));
        assertEquals(scan(rows, test), search(searcher, Where.parse(text, FIELDS, MetaStore::key), rows.size()), Randoms.describe(seed));
      }
    }
  }

  /** Up to the limits the answer is right; past them the refusal names the limit and the position. */
  @Test
  void nestingAndClauseCountAreCappedWithAClearRefusal() throws IOException {
    long seed = Randoms.seed(5);
    SplittableRandom rnd = new SplittableRandom(seed);
    List<Row> rows = rows(rnd, 120);
    try (ByteBuffersDirectory dir = index(rows); DirectoryReader reader = DirectoryReader.open(dir)) {
      IndexSearcher searcher = new IndexSearcher(reader);
      // deepest accepted nesting: parentheses and 'not' mixed, built with its meaning
      Expr e = atom(rnd);
      for (int d = 0; d < Where.MAX_NESTING; d++) {
        Expr inner = e;
        e = rnd.nextBoolean() ? new Expr("(" + inner.text + ")", inner.test, 0) : new Expr("not " + inner.text, inner.test.negate(), 3);
      }
      assertEquals(scan(rows, e.test), search(searcher, Where.parse(e.text, FIELDS, MetaStore::key), rows.size()), e.text + " " + Randoms.describe(seed));
      // the longest accepted or-chain: MAX_CLAUSES comparisons
      StringBuilder chain = new StringBuilder();
      Predicate<Row> any = r -> false;
      for (int i = 0; i < Where.MAX_CLAUSES; i++) {
        Expr a = rnd.nextBoolean() ? atom(rnd) : new Expr("score = " + rnd.nextInt(11) / 10.0, null, 0);
        if (a.text.contains("!=") || a.text.contains("not in")) a = new Expr("source = a", r -> "a".equals(r.source), 0);
        if (a.test == null) {
          double x = Double.parseDouble(a.text.substring(8));
          a = new Expr(a.text, r -> r.score != null && r.score == x, 0);
        }
        chain.append(i == 0 ? "" : " or ").append(a.text);
        any = any.or(a.test);
      }
      assertEquals(scan(rows, any), search(searcher, Where.parse(chain.toString(), FIELDS, MetaStore::key), rows.size()), Randoms.describe(seed));
    }
    String tooDeep = "(".repeat(Where.MAX_NESTING) + "not label = cat" + ")".repeat(Where.MAX_NESTING);
    assertThatThrownBy(() -> Where.parse(tooDeep, FIELDS, MetaStore::key)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("position " + (Where.MAX_NESTING + 1)).hasMessageContaining("nest more than " + Where.MAX_NESTING);
    // the inputs that overflowed the stack before: 3,000 parentheses, 30,000 'not'
    for (String huge : List.of("(".repeat(3000) + "label = cat" + ")".repeat(3000), "not ".repeat(30000) + "label = cat")) {
      assertThatThrownBy(() -> Where.parse(huge, FIELDS, MetaStore::key)).isInstanceOf(BadInputException.class)
          .hasMessageContaining("nest more than").message().hasSizeLessThan(400).doesNotContain("\n");
    }
    String tooLong = "label = a or ".repeat(Where.MAX_CLAUSES) + "label = b";
    assertThatThrownBy(() -> Where.parse(tooLong, FIELDS, MetaStore::key)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("position " + (tooLong.length() - "label = b".length() + 1))
        .hasMessageContaining("in (").message().hasSizeLessThan(400);
    // != and not count one more each: 501 of them are 1,002 clauses
    assertThatThrownBy(() -> Where.parse("label != a and ".repeat(500) + "label != b", FIELDS, MetaStore::key))
        .isInstanceOf(BadInputException.class).hasMessageContaining("more than " + Where.MAX_CLAUSES);
  }

  @Test
  void messagesQuoteOnlyAShortPrefix() {
    String longValue = "x".repeat(5_000_000);
    assertThatThrownBy(() -> Where.parse("score = " + longValue, FIELDS, MetaStore::key)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("not a number").hasMessageContaining("5,000,000 characters").message().hasSizeLessThan(400);
    assertThatThrownBy(() -> Where.parse("label = 'a\nb' and\ncolour = red", FIELDS, MetaStore::key)).isInstanceOf(BadInputException.class)
        .message().doesNotContain("\n");
  }

  static List<Integer> scan(List<Row> rows, Predicate<Row> test) {
    List<Integer> want = new ArrayList<>();
    for (int i = 0; i < rows.size(); i++) if (test.test(rows.get(i))) want.add(i);
    return want;
  }

  static List<Integer> search(IndexSearcher searcher, Query q, int n) throws IOException {
    List<Integer> got = new ArrayList<>();
    for (ScoreDoc sd : searcher.search(q, n + 1).scoreDocs)
      got.add(Integer.parseInt(searcher.storedFields().document(sd.doc).get("row")));
    got.sort(null);
    return got;
  }

  // ---- random expressions with their meaning

  record Expr(String text, Predicate<Row> test, int kind) {} // kind: 0 atom, 1 and, 2 or, 3 not

  static Expr expr(SplittableRandom rnd, int depth) {
    int pick = depth == 0 ? 0 : rnd.nextInt(5);
    if (pick <= 1) return atom(rnd);
    if (pick == 4) {
      Expr a = expr(rnd, depth - 1);
      return new Expr("not " + wrap(a, a.kind == 1 || a.kind == 2), a.test.negate(), 3);
    }
    boolean and = pick == 2;
    Expr a = expr(rnd, depth - 1), b = expr(rnd, depth - 1);
    // precedence: not > and > or; parenthesize only where needed, or at random anyway
    boolean wrapA = (and && a.kind == 2) || rnd.nextInt(4) == 0, wrapB = (and ? b.kind == 2 : false) || rnd.nextInt(4) == 0;
    // 'or' is left-associative and 'and' too; a right operand of the same kind needs no parentheses either way
    String text = wrap(a, wrapA) + (and ? (rnd.nextBoolean() ? " and " : " AND ") : " or ") + wrap(b, wrapB);
    return new Expr(text, and ? a.test.and(b.test) : a.test.or(b.test), and ? 1 : 2);
  }

  static String wrap(Expr e, boolean paren) {
    return paren ? "(" + e.text + ")" : e.text;
  }

  static Expr atom(SplittableRandom rnd) {
    switch (rnd.nextInt(4)) {
      case 0 -> {
        String v = LABELS[rnd.nextInt(LABELS.length)];
        boolean ne = rnd.nextBoolean();
        return new Expr("label " + (ne ? "!=" : "=") + " " + quote(v), r -> ne != v.equals(r.label), 0);
      }
      case 1 -> {
        String a = SPLITS[rnd.nextInt(3)], b = SPLITS[rnd.nextInt(3)];
        boolean not = rnd.nextBoolean();
        return new Expr("split " + (not ? "not in" : "in") + " (" + a + ", '" + b + "')",
            r -> not != (a.equals(r.split) || b.equals(r.split)), 0);
      }
      case 2 -> {
        String[] ops = {"=", "!=", "<", "<=", ">", ">="};
        String op = ops[rnd.nextInt(ops.length)];
        double x = rnd.nextInt(11) / 10.0;
        String field = rnd.nextBoolean() ? "score" : "n";
        Predicate<Row> p = r -> {
          Double v = field.equals("score") ? r.score : r.n;
          if (v == null) return op.equals("!=");
          return switch (op) {
            case "=" -> v == x;
            case "!=" -> v != x;
            case "<" -> v < x;
            case "<=" -> v <= x;
            case ">" -> v > x;
            default -> v >= x;
          };
        };
        return new Expr(field + " " + op + " " + x, p, 0);
      }
      default -> {
        String v = SOURCES[rnd.nextInt(SOURCES.length)];
        return new Expr("source = \"" + v + "\"", r -> v.equals(r.source), 0);
      }
    }
  }

  static String quote(String v) {
    if (v.matches("[a-z]+") && !v.equals("and")) return v;
    return "'" + v.replace("'", "\\'") + "'";
  }

  static List<Row> rows(SplittableRandom rnd, int n) {
    List<Row> rows = new ArrayList<>();
    for (int i = 0; i < n; i++)
      rows.add(new Row(rnd.nextInt(8) == 0 ? null : LABELS[rnd.nextInt(LABELS.length)], SPLITS[rnd.nextInt(3)],
          rnd.nextInt(6) == 0 ? null : rnd.nextInt(11) / 10.0, SOURCES[rnd.nextInt(3)],
          rnd.nextInt(5) == 0 ? null : (double) (rnd.nextInt(3) - 1) / 2));
    return rows;
  }

  static ByteBuffersDirectory index(List<Row> rows) throws IOException {
    ByteBuffersDirectory dir = new ByteBuffersDirectory();
    try (org.apache.lucene.index.IndexWriter w = new org.apache.lucene.index.IndexWriter(dir, new IndexWriterConfig())) {
      for (int i = 0; i < rows.size(); i++) {
        Row r = rows.get(i);
        Document d = new Document();
        d.add(new StoredField("row", Integer.toString(i)));
        if (r.label != null) d.add(new StringField("label", r.label, Field.Store.NO));
        if (r.split != null) d.add(new StringField("split", r.split, Field.Store.NO));
        if (r.source != null) d.add(new StringField("source", r.source, Field.Store.NO));
        if (r.score != null) d.add(new DoublePoint("score", r.score));
        if (r.n != null) d.add(new DoublePoint("n", r.n));
        w.addDocument(d);
      }
    }
    return dir;
  }

  /** Writes {@code codes} with {@code meta} in {@code parts} segments. */
  private static void write(java.nio.file.Path dir, io.actindex.core.CodeBlock codes, List<Map<String, String>> meta, int parts) {
    try (io.actindex.index.store.IndexWriter w = io.actindex.index.store.IndexWriter.create(dir, codes.layout(), Map.of())) {
      int n = codes.size();
      for (int p = 0; p < parts; p++) {
        int from = n * p / parts, to = n * (p + 1) / parts;
        w.add(codes.slice(from, to), meta.subList(from, to));
      }
    }
  }

  /** {@link Where#select}'s answer (a set over every id of the index) as a bitmap, null staying null. */
  private static RoaringBitmap select(io.actindex.index.store.IndexReader reader, String expr) {
    io.actindex.core.IdSet ids = Where.select(reader.meta(), expr);
    if (ids == null) return null;
    assertEquals(reader.maxId(), ids.size(), expr);
    return RoaringBitmap.bitmapOf(ids.toArray());
  }
}
