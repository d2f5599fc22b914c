package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.Randoms;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.SplittableRandom;
import java.util.regex.Pattern;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class LabelSpellingsTest {
  @TempDir Path tmp;
  private static List<Map<String, String>> rows(String... labels) {
    return java.util.Arrays.stream(labels).map(l -> l == null ? Map.<String, String>of() : Map.of("label", l)).toList();
  }

  @Test
  void numbersAreWrittenWithoutTrailingZeros() {
    assertThat(LabelSpellings.number("3")).isEqualTo("3");
    assertThat(LabelSpellings.number("3.0")).isEqualTo("3");
    assertThat(LabelSpellings.number("2.50")).isEqualTo("2.5");
    assertThat(LabelSpellings.number("-1.00")).isEqualTo("-1");
    assertThat(LabelSpellings.number("1e1")).isEqualTo("10");
    assertThat(LabelSpellings.number("cat")).isNull();
    assertThat(LabelSpellings.number("3a")).isNull();
    assertThat(LabelSpellings.number("")).isNull();
    assertThat(LabelSpellings.number(null)).isNull();
  }

  @Test
  void aNumberWrittenTwoWaysInOneFileIsNoted() {
    String note = LabelSpellings.note("m.csv", rows("1", "cat", null, "3", "1.0"), null);
    assertThat(note).startsWith("m.csv: note: label '1.0' and '1' earlier in the file are the same number written two ways");
    assertThat(LabelSpellings.note("m.csv", rows("1", "2", "1", "cat", "Cat", "01x"), null)).isNull();
  }

  /** "café" precomposed (NFC) and with a combining accent (NFD) print alike but are two labels: noted, not rewritten. */
  @Test
  void oneTextInTwoUnicodeFormsIsNoted() {
    String nfc = "caf\u00e9", nfd = "cafe\u0301";
    String note = LabelSpellings.note("m.csv", rows("dog", nfc, "1", nfd), null);
    assertThat(note).startsWith("m.csv: note: label '" + nfd + "' and '" + nfc + "' earlier in the file are the same text in two Unicode forms")
        .contains("unicodedata.normalize('NFC', s)");
    assertThat(LabelSpellings.note("m.csv", rows(nfc, "cafe", "Caf\u00e9", nfc), null)).isNull();
  }

  @Test
  void aBatchWritingTheIndexsNumbersAnotherWayIsNoted() {
    Set<String> index = Set.of("0", "1", "2");
    assertThat(LabelSpellings.note("b.csv", rows("1.0", "2.0"), inSet(index)))
        .startsWith("b.csv: note: label '1.0' and '1' in the index are the same number");
    assertThat(LabelSpellings.note("b.csv", rows("1", "2"), inSet(Set.of("1.0"))))
        .startsWith("b.csv: note: label '1' and '1.0' in the index are the same number");
    assertThat(LabelSpellings.note("b.csv", rows("1", "2", "5"), inSet(index))).isNull();
    // any plain decimal spelling of the index's number, not only n and n.0
    assertThat(LabelSpellings.note("b.csv", rows("cat", "3"), inSet(Set.of("3.00", "cat"))))
        .startsWith("b.csv: note: label '3' and '3.00' in the index are the same number");
    assertThat(LabelSpellings.note("b.csv", rows("7"), inSet(Set.of("07")))).startsWith("b.csv: note: label '7' and '07' in the index");
    assertThat(LabelSpellings.note("b.csv", rows("2.5"), inSet(Set.of("2.50")))).startsWith("b.csv: note: label '2.5' and '2.50' in the index");
    assertThat(LabelSpellings.note("b.csv", rows("0.5"), inSet(Set.of(".5")))).startsWith("b.csv: note: label '0.5' and '.5' in the index");
    assertThat(LabelSpellings.note("b.csv", rows("1e1"), inSet(Set.of("10.0")))).startsWith("b.csv: note: label '1e1' and '10.0' in the index");
    assertThat(LabelSpellings.note("b.csv", rows("3", "-1", "0.5", "cat"), inSet(Set.of("30", "1", "-3", "0.05", "5", "Cat")))).isNull();
  }

  /** What {@link LabelSpellings#inIndex} finds in an index holding {@code labels}: a label its pattern matches, other than the one asked about. */
  private static java.util.function.UnaryOperator<String> inSet(Set<String> labels) {
    return label -> {
      String n = LabelSpellings.number(label);
      if (n == null) return null;
      Pattern a = pattern(n);
      return labels.stream().filter(l -> !l.equals(label) && a.matcher(l).matches()).sorted().findFirst().orElse(null);
    };
  }

  /** The pattern as java.util.regex reads it (its constructs mean the same there as in Lucene's syntax: the index test below runs Lucene's). */
  private static Pattern pattern(String number) {
    return Pattern.compile(LabelSpellings.spellings(number));
  }

  /**
   * The pattern of a number's spellings matches a plain decimal exactly when it writes the same
   * number (reference: {@link java.math.BigDecimal#compareTo}); exponent forms and text never.
   */
  @Test
  void theSpellingsPatternMatchesEveryPlainDecimalOfTheSameNumberAndNothingElse() {
    for (int run = 0; run < 200; run++) {
      long seed = Randoms.seed(run);
      SplittableRandom rnd = new SplittableRandom(seed);
      String a = spelling(rnd, rnd.nextInt(3), rnd.nextInt(3), rnd.nextBoolean());
      String n = LabelSpellings.number(a);
      Pattern pattern = pattern(n);
      for (int i = 0; i < 200; i++) {
        // near misses too: the same digits with another length or sign
        String b = rnd.nextInt(4) == 0 ? a.replaceFirst("\\.", "") : spelling(rnd, rnd.nextInt(3), rnd.nextInt(3), rnd.nextBoolean());
        if (b.isEmpty() || !io.actindex.encode.io.CsvMatrixReader.isDecimal(b)) continue;
        boolean same = new java.math.BigDecimal(a).compareTo(new java.math.BigDecimal(b)) == 0;
        assertThat(pattern.matcher(b).matches()).as("%s against %s (pattern %s), %s", b, a, LabelSpellings.spellings(n), Randoms.describe(seed)).isEqualTo(same);
      }
      for (String other : List.of("", "+", "-", ".", "-.", "+.", "e1", a + "e0", a + "x", "x" + a, "1" + a + "5", a + " "))
        assertThat(pattern.matcher(other).matches()).as("'%s' against %s, %s", other, a, Randoms.describe(seed)).isFalse();
    }
  }

  /** A random plain decimal with up to {@code intDigits} / {@code fracDigits} significant digits, padded with zeros both ways. */
  private static String spelling(SplittableRandom rnd, int intDigits, int fracDigits, boolean point) {
    StringBuilder s = new StringBuilder();
    int sign = rnd.nextInt(3);
    if (sign == 1) s.append('-');
    if (sign == 2) s.append('+');
    s.append("0".repeat(rnd.nextInt(3)));
    for (int i = 0; i < intDigits; i++) s.append((char) ('0' + rnd.nextInt(i == 0 ? 3 : 10)));
    if (point || fracDigits > 0) s.append('.');
    for (int i = 0; i < fracDigits; i++) s.append((char) ('0' + rnd.nextInt(3)));
    if (point) s.append("0".repeat(rnd.nextInt(3)));
    String t = s.toString();
    return t.matches("[+-]?\\.?") ? t + "0" : t; // at least one digit
  }

  /** The look-up in a real index, through its metadata store's pattern search: live labels only, the batch's own spelling never. */
  @Test
  void theIndexIsSearchedForOtherSpellingsOfTheLabelsNumber() {
    List<String> labels = List.of("3.00", "3", "cat", "07", "-0.50", "30", "12", "1e1");
    Path dir = tmp.resolve("idx");
    try (IndexWriter w = IndexWriter.create(dir, SyntheticCodes.uniform(1, 16, 1).layout(), Map.of())) {
      w.add(SyntheticCodes.uniform(labels.size(), 16, 1), rows(labels.toArray(String[]::new)));
      w.delete(labels.indexOf("12"));
    }
    try (IndexReader r = IndexReader.open(dir)) {
      assertThat(LabelSpellings.inIndex(r.meta(), "3")).isEqualTo("3.00");
      assertThat(LabelSpellings.inIndex(r.meta(), "3.0")).isEqualTo("3.00"); // the smallest id's spelling
      assertThat(LabelSpellings.inIndex(r.meta(), "+7")).isEqualTo("07");
      assertThat(LabelSpellings.inIndex(r.meta(), "-.5")).isEqualTo("-0.50");
      assertThat(LabelSpellings.inIndex(r.meta(), "0.5")).isNull(); // another sign
      assertThat(LabelSpellings.inIndex(r.meta(), "30")).isNull(); // only its own spelling
      assertThat(LabelSpellings.inIndex(r.meta(), "12.0")).isNull(); // deleted
      assertThat(LabelSpellings.inIndex(r.meta(), "10")).isNull(); // exponent forms are not searched for in the index
      assertThat(LabelSpellings.inIndex(r.meta(), "cat")).isNull();
    }
    Path other = tmp.resolve("unicode");
    List<String> text = List.of("cafe\u0301", "dog", "na\u00efve");
    try (IndexWriter w = IndexWriter.create(other, SyntheticCodes.uniform(1, 16, 1).layout(), Map.of())) {
      w.add(SyntheticCodes.uniform(text.size(), 16, 1), rows(text.toArray(String[]::new)));
    }
    try (IndexReader r = IndexReader.open(other)) {
      assertThat(LabelSpellings.inIndex(r.meta(), "caf\u00e9")).isEqualTo("cafe\u0301");
      assertThat(LabelSpellings.inIndex(r.meta(), "nai\u0308ve")).isEqualTo("na\u00efve");
      assertThat(LabelSpellings.inIndex(r.meta(), "cafe\u0301")).isNull(); // its own form
      assertThat(LabelSpellings.inIndex(r.meta(), "dog")).isNull();
    }
  }
}
