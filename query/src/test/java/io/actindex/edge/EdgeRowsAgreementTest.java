package io.actindex.edge;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import io.actindex.encode.CodeStream;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.encode.mlp.Mlp;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.ejml.data.DMatrixRMaj;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The edge jar's {@code --inputs} rows and the index's CSV reader under {@code --header auto}, then
 * the model's width check (what {@code ood score} reads a CSV of raw inputs with) agree on one-line,
 * semicolon-separated, headed, blank-line, empty, CR-ended, quoted, row-indexed, decimal-comma and
 * wrong-width files: both refuse, or both read the same number of rows. A one-line semicolon file was a header without rows to the edge jar
 * (exit 0, nothing scored) and refused by the index. One difference is documented and tested: the
 * edge jar decides the decimal-comma question on row 0. Where both refuse, the refusals name the same
 * place (byte and line, or line, row and column) and the same fault ({@link #assertNamedAlike}):
 * they differed before (the edge jar named rows only, said "not finite", and read Latin-1 and NUL
 * bytes as text).
 */
class EdgeRowsAgreementTest {
  @TempDir Path tmp;
  private String lastErr; // the edge jar's stderr in the last edge(...)
  private String indexRefusal; // the index's refusal in the last index(...), its file name cut off; null when it read the file

  /** A bundle with a model of {@code d} inputs, one hidden layer of 4 units (the code) and 2 outputs. */
  private static EdgeBundle bundle(int d) {
    float[] w1 = new float[4 * d], w2 = new float[2 * 4];
    for (int i = 0; i < w1.length; i++) w1[i] = (i % 3) - 1;
    for (int i = 0; i < w2.length; i++) w2[i] = (i % 2) * 2 - 1;
    EdgeBundle.Model m = new EdgeBundle.Model(List.of(new EdgeBundle.Layer("a", 4, d, w1, new float[4]),
        new EdgeBundle.Layer("out", 2, 4, w2, new float[2])), new double[4]);
    return new EdgeBundle(List.of("a"), new int[] {4}, new long[] {0b0101, 0b0011}, new int[] {2, 1},
        new EdgeBundle.Calibration(1, EdgeBundle.Statistic.KTH, List.of(), 0.9, 1, new double[] {0, 1, 2}), m);
  }

  /** {@link #bundle}'s model as the index holds one: what ood score runs raw inputs through, named {@link #MODEL}. */
  private static Mlp mlp(int d) {
    EdgeBundle.Model m = bundle(d).model();
    List<Mlp.Layer> layers = new ArrayList<>();
    for (EdgeBundle.Layer l : m.layers()) {
      double[] w = new double[l.weight().length], b = new double[l.bias().length];
      for (int i = 0; i < w.length; i++) w[i] = l.weight()[i];
      for (int i = 0; i < b.length; i++) b[i] = l.bias()[i];
      layers.add(new Mlp.Layer(l.name(), DMatrixRMaj.wrap(l.out(), l.in(), w), b));
    }
    return new Mlp(layers);
  }

  private static final String MODEL = "M";

  /**
   * Rows that ood score's reading of raw inputs takes from {@code text} (the index's CSV reader under
   * AUTO, through the model's width check, {@link Encoders#model}), or -1 when it refuses the file
   * ({@link #indexRefusal} says why).
   */
  private long index(String text, int d) throws Exception {
    return index(text.getBytes(StandardCharsets.UTF_8), d);
  }

  private long index(byte[] bytes, int d) throws Exception {
    Path f = Files.write(tmp.resolve("rows.csv"), bytes);
    indexRefusal = null;
    try (CodeStream s = Encoders.model(mlp(d), MODEL, f, EncodeOptions.positive())) {
      long n = 0;
      for (CodeBlock b; (b = s.next(64)) != null; ) n += b.size();
      return n;
    } catch (BadInputException e) {
      assertThat(e.getMessage()).startsWith(f + ": ");
      indexRefusal = e.getMessage().substring(f.toString().length() + 2);
      return -1;
    }
  }

  /** Rows the edge jar scores from {@code text} as standard input, or -1 when it exits 2 (with one line on stderr). */
  private long edge(String text, int d) throws Exception {
    return edge(text.getBytes(StandardCharsets.UTF_8), d);
  }

  private long edge(byte[] bytes, int d) throws Exception {
    Path file = Files.write(tmp.resolve("b.edge"), BundleFormat.toBytes(bundle(d)));
    ByteArrayOutputStream out = new ByteArrayOutputStream(), err = new ByteArrayOutputStream();
    int code = EdgeMain.run(new String[] {file.toString(), "--inputs"}, new ByteArrayInputStream(bytes),
        new PrintStream(out, true, StandardCharsets.UTF_8), new PrintStream(err, true, StandardCharsets.UTF_8));
    String e = lastErr = err.toString(StandardCharsets.UTF_8);
    String text = shown(bytes);
    assertThat(code).as(text + ": " + e).isIn(0, 2);
    if (code == 2) { // one line; after the header note, printed once rows 0 to 2 are read, when a later row is refused
      List<String> lines = e.lines().toList();
      assertThat(lines).as(text).hasSizeBetween(1, 2);
      if (lines.size() == 2) {
        assertThat(lines.get(0)).as(text).startsWith("note: ");
        assertThat(lines.get(1)).as(text).containsPattern("\\(row ([3-9]|\\d\\d+)\\)");
        lastErr = lines.get(1);
      }
      return -1;
    }
    return out.toString(StandardCharsets.UTF_8).lines().count() - 2; // after the caution line and the column names
  }

  /** The bytes of a test file for a failure message: at most 200 characters. */
  private static String shown(byte[] bytes) {
    String s = new String(bytes, 0, Math.min(bytes.length, 200), StandardCharsets.UTF_8);
    return bytes.length > 200 ? s + "..." : s;
  }

  /** Where a refusal points (byte and line; line, row and column; line alone) and what it says after that. */
  private static final Pattern PLACE = Pattern.compile("(byte \\d+ \\(line \\d+\\)|line \\d+( \\(row \\d+\\))?(, column \\d+ \\(0-based\\))?):? (.*)");

  /**
   * Refusals of the whole file, which the index words without a place (the file's name is the place):
   * the index's words, the edge jar's (which adds the header's line to the second).
   */
  private static final String[][] WHOLE_FILE = {
      {"the CSV file is empty", "is empty: no rows"}, {"the CSV file has a header but no rows", "has a header but no rows (line "}};

  private static final String DECIMAL_COMMA = "is two whole numbers, the second without a sign";

  /** Where the edge jar refuses a file of another width than the model's: the header line, or row 0. */
  private static final Pattern WIDTH_PLACE = Pattern.compile("line \\d+( \\(row 0\\)|, the header): (rows have .*)");

  /**
   * The last {@link #index} and {@link #edge} refusals of {@code what} name the same place and the same
   * fault: the place exactly (the index names no row for a bad quote, the edge jar always does: then
   * the row is left out), the fault up to its first {@code ": "} or {@code "; "}, where each reader goes
   * on in its own words (a file to save, rows to write; the index's {@code header} option, which the
   * edge jar does not take), the edge jar's {@code ", the model's inputs"} left out. A file empty or
   * with a header and no rows, and the separator hint after it, are worded alike ({@link #WHOLE_FILE}).
   * A file of another width than the model's is refused by ood score before any row (the model's
   * check, naming no line), by the edge jar at its header or row 0, in the same words up to the
   * first {@code "; "} ({@code "the bundle's model"} for the model's name) and the same
   * {@code "one column too many"} hint.
   */
  private void assertNamedAlike(String what) {
    assertThat(lastErr).as(what).startsWith("stdin ");
    String edge = lastErr.strip().substring("stdin ".length());
    assertThat(indexRefusal).as(what + ": the edge jar said " + edge).isNotNull();
    if (edge.contains(DECIMAL_COMMA)) { // the documented difference: the edge jar decides on row 0, before a later bad row
      assertThat(edge).as(what).containsPattern("^line \\d+ \\(row 0\\): ");
      return;
    }
    for (String[] w : WHOLE_FILE)
      if (indexRefusal.contains(w[0])) {
        assertThat(edge).as(what + ": the index said " + indexRefusal).startsWith(w[1]);
        String separated = "; it holds numbers separated by ";
        if (indexRefusal.contains(separated))
          assertThat(edge).as(what).contains(indexRefusal.substring(indexRefusal.indexOf(separated)).split(":")[0]);
        return;
      }
    if (indexRefusal.startsWith("rows have ")) {
      Matcher w = WIDTH_PLACE.matcher(edge);
      assertThat(w.matches()).as(what + ": " + edge).isTrue();
      String index = indexRefusal.replace("the model " + MODEL + " (", "the bundle's model (");
      assertThat(fault(w.group(2))).as("%s: the edge jar's refusal against the index's:%n  %s%n  %s", what, edge, indexRefusal)
          .isEqualTo(fault(index));
      String tooMany = "; one column too many";
      if (index.contains(tooMany)) assertThat(edge).as(what).endsWith(index.substring(index.indexOf(tooMany)));
      else assertThat(edge).as(what).doesNotContain(tooMany);
      return;
    }
    Matcher i = PLACE.matcher(indexRefusal), e = PLACE.matcher(edge);
    assertThat(i.matches()).as(what + ": " + indexRefusal).isTrue();
    assertThat(e.matches()).as(what + ": " + edge).isTrue();
    String edgePlace = i.group(2) == null ? e.group(1).replaceFirst(" \\(row \\d+\\)", "") : e.group(1);
    assertThat(edgePlace + " " + fault(e.group(4))).as("%s: the edge jar's refusal against the index's:%n  %s%n  %s", what, edge, indexRefusal)
        .isEqualTo(i.group(1) + " " + fault(i.group(4)));
  }

  private static String fault(String said) {
    String s = said.replace(", the model's inputs)", ")");
    for (String end : List.of(": ", "; ")) if (s.contains(end)) s = s.substring(0, s.indexOf(end));
    return s;
  }

  @Test
  void oneLineSemicolonHeaderAndBlankLineFilesAreReadAlike() throws Exception {
    Object[][] cases = {
        {"0.1;0.2;0.3\n", 3}, {"0.1;0.2;0.3", 1}, {"0.1;0.2;0.3\n0.4;0.5;0.6\n", 3}, {"1;2\n", 2}, {"a,b,c\n", 3}, {"a,b,c\n\n\n", 3},
        {"a,b,c\n1,2,5\n", 3}, {"0,1,2\n1,2,5\n", 3}, {"0,1,2\n", 3}, {"0.1,0.2,0.3\n", 3}, {"0.1,0.2,0.3\n0.5,1,1\n", 3}, {"3,2,1\n", 3},
        {"0.1,0.2,0.4\n", 3}, {"0\n", 1}, {"0\n1\n", 1}, {"1\n", 1}, {"0,1\n", 2}, {"0,1\n0,-1\n", 2}, {"1.5,-2\n", 2},
        {"\n1.5,2,3\n\n4,5,6.5\n\n", 3}, {" \n\t\n1.5,2,3\n", 3}, {"\uFEFFa,b,c\n1.5,2,3\n", 3}, {"1,2,x\n1,2,3\n", 3}, {"1.5,2,3\n1;2;3\n", 3}};
    for (Object[] c : cases) {
      String text = (String) c[0];
      int d = (Integer) c[1];
      long index = index(text, d);
      assertThat(edge(text, d)).as("'%s' with %d inputs: edge rows (-1 refused) against the index's", text, d).isEqualTo(index);
      if (index < 0) assertNamedAlike(text);
    }
  }

  /**
   * The five differences the first version of this test left: empty or blank input (the edge jar
   * exited 0), lines ending in CR alone (read by the edge jar), quoted cells (refused by it), pandas'
   * header over a row-index column (refused by it) and two whole numbers per row for a two-input
   * model (scored by it). Each file is also checked to be refused or read as the case says, so that
   * two readers that changed alike do not pass unnoticed.
   */
  @Test
  void emptyCrQuotedRowIndexAndDecimalCommaFilesAreReadAlike() throws Exception {
    Object[][] cases = {
        // empty or blank: refused
        {"", 3, -1}, {"\n", 3, -1}, {" \n\t\n\n", 3, -1}, {"\uFEFF", 3, -1}, {"\uFEFF\n\n", 3, -1},
        // CR alone ends no line (refused); CR before LF does, and so does a last CR of the file
        {"1.5,2,3\r4,5,6.5\r", 3, -1}, {"a,b,c\r1.5,2,3\r", 3, -1}, {"1.5,2,3\n4,5\r6,7\n", 3, -1}, {"1.5,2,3\r\n4,5,6.5\r\n", 3, 2},
        {"1.5,2,3\r", 3, 1}, {"a,b,c\r\n\r\n1.5,2,3\r\n", 3, 1},
        // quoted cells: a quoted number is a number, a quoted header a header; a quote left open or text after it refused
        {"\"0.1\",\"0.2\",\"0.5\"\n", 3, 1}, {"\"a\",\"b,c\",\"d\"\n\"0.1\", 2 ,\"0.5\"\n4,5,6.5\n", 3, 2},
        {"\"0\",\"1\",\"2\"\n1.5,2,3\n", 3, 1}, {"\"0\",\"1\"\n", 2, -1}, {"1.5,\"2,3\n", 3, -1}, {"1.5,\"2\"x,3\n", 3, -1},
        {"1.5,\"x\",3\n", 3, -1}, {"\"\"\"a\"\"\",b,c\n1.5,2,3\n", 3, 1},
        // pandas' header over a row-index column: empty, 'Unnamed: 0' or 'index' before the column numbers or names
        {",0,1,2\n0,1.5,2,3\n1,4,5,6.5\n", 4, 2}, {",a,b\n0,1.5,2\n", 3, 1}, {"Unnamed: 0,0,1\n0,1.5,2\n", 3, 1},
        {"index,0,1,2\n0,1.5,2,3\n", 4, 1}, {",0,1,2\n0,1.5,2,3\n", 3, -1}, {",1,2\n0,1.5,2\n", 3, -1},
        // two whole numbers, the second unsigned, for a two-input model: one value with a decimal comma, refused
        {"0,342\n", 2, -1}, {"0,342\n1,5\n-0,25\n", 2, -1}, {"-2, 7\n", 2, -1}, {"0,342\n0.5,1\n1,x\n", 2, -1},
        {"x,y\n0,342\n1,5\n", 2, 2}, {"\"0\",\"342\"\n1,5\n", 2, 2}, {"0.5,1\n0,342\n", 2, 2}, {"0,-342\n1,5\n", 2, 2},
        {"0,342\n", 3, -1}};
    for (Object[] c : cases) {
      String text = (String) c[0];
      int d = (Integer) c[1];
      long index = index(text, d);
      assertThat(index).as("'%s': the index's rows (-1 refused)", text).isEqualTo(((Integer) c[2]).longValue());
      assertThat(edge(text, d)).as("'%s' with %d inputs: edge rows (-1 refused) against the index's", text, d).isEqualTo(index);
      if (index < 0) assertNamedAlike(text);
    }
  }

  /**
   * Bad cells, wrong widths, NaN and infinities, quotes, mixed first lines, other encodings, NUL and
   * CR bytes: both readers refuse each file and name the same place and fault. Before, the edge jar
   * named the row alone ({@code stdin row 2: column 1: ...}, no line, so a header or blank lines
   * left the line to guess), said {@code not finite} or {@code '' is not a number}, read a Latin-1
   * header and a row ending in a NUL byte (exit 0), and took UTF-16 for a cell that is not a number.
   */
  @Test
  void badCellsAndBytesAreRefusedAtTheSamePlaceForTheSameFault() throws Exception {
    Object[][] cases = {
        // a bad cell with no header, after a header, after blank lines, after a byte order mark, in CRLF lines
        {"1.5,2,3\n4,5,6\n4,x,6\n", 3}, {"a,b,c\n1.5,2,3\n4,x,6\n", 3}, {"\n1.5,2,3\n\n4,x,6\n", 3}, {"\uFEFF1.5,2,3\n4,x,6\n", 3},
        {"1.5,2,3\r\n4,x,6\r\n", 3}, {"0.5\nx\n", 1}, {"1.5,2,3\n4 5 6\n", 3}, {"1.5,2,3\n4;5;6\n", 3},
        // empty fields, NaN, infinities, a number too large for a double
        {"1.5,2,3\n4,,6\n", 3}, {"1.5,2,3\n4,5,\n", 3}, {"1.5,2,3\n4,NaN,6\n", 3}, {"1.5,2,3\n-inf,5,6\n", 3}, {"1.5,2,3\n4,5,Infinity\n", 3},
        {"1.5,2,3\n4,1e400,6\n", 3}, {"1.5,2,nan\n", 3},
        // rows of another width than the first row and the model's
        {"1.5,2,3\n4,5,6,7\n", 3}, {"1.5,2,3\n4,5\n", 3}, {"a,b,c\n1.5,2,3\n4,5\n", 3}, {"1.5,2,3\n4,x,6,7\n", 3},
        // quotes
        {"1.5,2,3\n4,\"5,6\n", 3}, {"1.5,2,3\n4,\"5\"x,6\n", 3}, {"1.5,2,3\n\"4\",\"\",6\n", 3},
        // a first line mixing text and numbers, with and without a row-index header cell
        {"a,2,3\n1.5,2,3\n", 3}, {"1.5,b,3\n1.5,2,3\n", 3}, {"index,2,3\n1.5,2,3\n", 3}, {",2,3\n1.5,2,3\n", 3}, {"1.5,2,\n", 3},
        // a first line that can be either
        {"0,1\n", 2}, {"1,2,3\n", 3}, {"400,410,420\n1.5,2,3\n", 3}};
    for (Object[] c : cases) {
      String text = (String) c[0];
      int d = (Integer) c[1];
      assertThat(index(text, d)).as("'%s': the index's rows (-1 refused)", text).isEqualTo(-1);
      assertThat(edge(text, d)).as("'%s': the edge jar's rows (-1 refused)", text).isEqualTo(-1);
      assertNamedAlike(text);
    }
    String rows = "1.5,2,3\n4,5,6\n";
    byte[][] bytes = {
        ("caf\u00e9,b,c\n" + rows).getBytes(StandardCharsets.ISO_8859_1), // a Latin-1 header: read as a header by the edge jar before
        (rows + "4,5,\u00b5\n").getBytes(StandardCharsets.ISO_8859_1), ("a,b,c\n" + rows + "4,5.5\u00b06\n").getBytes(StandardCharsets.ISO_8859_1),
        rows.getBytes(StandardCharsets.UTF_16), rows.getBytes(StandardCharsets.UTF_16LE), rows.getBytes(StandardCharsets.UTF_16BE),
        (rows + "4,5,6\0\n").getBytes(StandardCharsets.UTF_8), // the edge jar trimmed the NUL away and scored the row
        new byte[] {'1', ',', '2', ',', (byte) 0xc3, '(', '\n'}, (rows + "4,5,6\r7,8,9\n").getBytes(StandardCharsets.UTF_8)};
    for (byte[] b : bytes) {
      assertThat(index(b, 3)).as(shown(b)).isEqualTo(-1);
      assertThat(edge(b, 3)).as(shown(b)).isEqualTo(-1);
      assertNamedAlike(shown(b));
    }
  }

  /**
   * A line over {@link RowText#MAX_LINE_BYTES} is refused by both readers, the edge jar before it
   * reads on until memory runs out (it had no limit: a stream without line ends filled the heap).
   */
  @Test
  void aLineOverTheLimitIsRefusedByBoth() throws Exception {
    for (String before : List.of("", "1\n")) {
      byte[] b = Arrays.copyOf(before.getBytes(StandardCharsets.UTF_8), before.length() + RowText.MAX_LINE_BYTES + 1);
      Arrays.fill(b, before.length(), b.length, (byte) '1');
      assertThat(index(b, 1)).isEqualTo(-1);
      assertThat(edge(b, 1)).isEqualTo(-1);
      assertThat(lastErr.strip()).isEqualTo("stdin line " + (before.isEmpty() ? 1 : 2) + " is longer than 64 MiB");
      assertNamedAlike("a line of " + (RowText.MAX_LINE_BYTES + 1) + " bytes after '" + before + "'");
      Arrays.fill(b, before.length() + 1, b.length, (byte) ' '); // '1' and spaces: one byte shorter is read by both
      b[b.length - 1] = '\n';
      assertThat(index(b, 1)).isEqualTo(before.isEmpty() ? 1 : 2);
      assertThat(edge(b, 1)).isEqualTo(before.isEmpty() ? 1 : 2);
    }
  }

  /**
   * The one documented difference: a two-input model's row 0 of two whole numbers is refused by the
   * edge jar, which answers row by row, while the index reads the file when a later row shows two
   * columns (export-edge.md, EdgeMain.decimalComma); a header line before the rows reads it in both.
   */
  @Test
  void wholePairInRowZeroIsRefusedByTheEdgeJarEvenWhenALaterRowShowsTwoColumns() throws Exception {
    String text = "3,5\n0.5,0.7\n";
    assertThat(index(text, 2)).isEqualTo(2);
    assertThat(edge(text, 2)).isEqualTo(-1);
    assertThat(lastErr).startsWith("stdin line 1 (row 0): '3,5' is two whole numbers, the second without a sign").contains("put a line of column names");
    assertThat(edge("a,b\n" + text, 2)).isEqualTo(index("a,b\n" + text, 2)).isEqualTo(2);
  }

  /**
   * The three refusals of a whole file that the two readers worded apart: empty (or blank) input, a
   * header with no row after it, and rows of another width than the model's inputs, which ood score
   * refuses before reading rows. A header of another width over rows of the model's was scored by
   * the edge jar (exit 0: it took the width from row 0, ood score from the header) and refused by
   * ood score; a file of another width was refused by the edge jar as row 0's first missing or extra
   * column.
   */
  @Test
  void emptyHeaderOnlyAndWrongWidthFilesAreRefusedInTheSameWords() throws Exception {
    Object[][] cases = {
        // empty or blank; a header and no row (one semicolon-separated line is one text cell: a header)
        {"", 3}, {"\n \n", 3}, {"\uFEFF", 3}, {"a,b,c\n", 3}, {"a,b,c\n\n\n", 3}, {"0,1,2\n", 3}, {"0.1;0.2;0.3\n", 3}, {"1 2\n", 2},
        // rows of another width: fewer, more (a label or row index column), one cell of numbers apart by spaces or semicolons
        {"1.5,2\n4,5\n", 3}, {"1.5,2,3,4\n", 3}, {"\n1.5,2,3,4\n5,6,7,8\n", 3}, {"1.5\n", 2}, {"1.5,2,3\n", 2},
        {"1 2 3\n4 5 6\n", 3}, {"0.1;0.2;0.3\n0.4;0.5;0.6\n", 3},
        // a header of another width than the model's: over rows of the header's width, and over rows of the model's
        {"a,b,c,d\n1,2,3,4\n", 3}, {"a,b,c,target\n1.5,2,3,1\n", 3}, {",0,1,2\n0,1.5,2,3\n", 3}, {"a,b\n1.5,2\n", 3},
        {"a,b\n1.5,2,3\n", 3}, {"a,b,c,d\n1.5,2,3\n", 3}, {"\"x\",\"y\"\n1.5,2,3\n", 3}, {"x,y,z\n0.5,1\n", 2}};
    for (Object[] c : cases) {
      String text = (String) c[0];
      int d = (Integer) c[1];
      assertThat(index(text, d)).as("'%s' with %d inputs: the index's rows (-1 refused)", text, d).isEqualTo(-1);
      assertThat(edge(text, d)).as("'%s' with %d inputs: the edge jar's rows (-1 refused)", text, d).isEqualTo(-1);
      assertNamedAlike(text);
    }
  }

  /**
   * The decimal-comma question for a two-input model, decided by the edge jar on row 0 and by the
   * index at the end of the file, on random files of whole pairs ({@code 0,342}) mixed with other
   * rows (decimals, signed second cells, quoted cells, a row of three cells), with or without a line
   * of column names, blank lines and CRLF ends. Either both read the same number of rows, or both
   * refuse (in the same words, {@link #assertNamedAlike}), or the edge jar alone refuses, on row 0,
   * a whole pair, in a file whose later row shows two columns (the documented difference, where the
   * edge jar is the stricter). Never does the edge jar score a file that ood score refuses.
   */
  @Test
  void rowZeroDecidesNoFileTheIndexRefuses() throws Exception {
    String[] wholes = {"0", "3", "-2", "+4", "12", "007", " 5 "}, unsigned = {"342", "5", "0", "25", " 7"};
    String[] others = {"0.5", "-1.25", "1e3", "-7", "+0", "\"3\"", "2.", "-0,25"};
    int stricter = 0;
    for (int rep = 0; rep < 400; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      StringBuilder b = new StringBuilder();
      if (rnd.nextInt(4) == 0) b.append("x,y\n");
      int rows = 1 + rnd.nextInt(5);
      for (int r = 0; r < rows; r++) {
        if (rnd.nextInt(6) == 0) b.append('\n');
        if (rnd.nextInt(10) < 7) b.append(wholes[rnd.nextInt(wholes.length)]).append(',').append(unsigned[rnd.nextInt(unsigned.length)]);
        else b.append(others[rnd.nextInt(others.length)]).append(',').append(rnd.nextBoolean() ? others[rnd.nextInt(others.length)] : "5");
        if (rnd.nextInt(40) == 0) b.append(",1");
        b.append(rnd.nextInt(5) == 0 ? "\r\n" : "\n");
      }
      String text = b.toString(), what = Randoms.describe(seed) + ": '" + text + "'";
      long index = index(text, 2), edge = edge(text, 2);
      if (edge == index) {
        if (index < 0) assertNamedAlike(what);
        continue;
      }
      assertThat(edge).as(what + ": ood score reads %d rows where the edge jar refuses, or the reverse; the edge jar said %s, the index %s",
          index, lastErr, indexRefusal).isEqualTo(-1);
      assertThat(index).as(what).isGreaterThanOrEqualTo(2);
      assertThat(lastErr).as(what).containsPattern("^stdin line \\d+ \\(row 0\\): '[^']*' " + DECIMAL_COMMA);
      stricter++;
    }
    assertThat(stricter).as("files where the edge jar alone refuses (row 0 a whole pair, a later row not)").isPositive();
  }
}
