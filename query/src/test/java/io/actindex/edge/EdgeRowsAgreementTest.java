package io.actindex.edge;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.BadInputException;
import io.actindex.encode.io.CsvMatrixReader;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.List;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The edge jar's {@code --inputs} rows and the index's CSV reader under {@code --header auto} (what
 * {@code ood score} reads a CSV of inputs with) agree on one-line, semicolon-separated, headed,
 * blank-line, empty, CR-ended, quoted, row-indexed and decimal-comma files: both refuse, or both
 * read the same number of rows. A one-line semicolon file was a header without rows to the edge jar
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

  /**
   * Rows the index's CSV reader reads from {@code text} under AUTO, or -1 when it refuses the file
   * ({@link #indexRefusal} says why) or its width is not {@code d} (as ood score refuses inputs of
   * another width than the model's, before reading rows; {@link #indexRefusal} is then null).
   */
  private long index(String text, int d) throws Exception {
    return index(text.getBytes(StandardCharsets.UTF_8), d);
  }

  private long index(byte[] bytes, int d) throws Exception {
    Path f = Files.write(tmp.resolve("rows.csv"), bytes);
    indexRefusal = null;
    try (CsvMatrixReader r = CsvMatrixReader.open(f, CsvMatrixReader.Header.AUTO)) {
      if (r.cols() != d) return -1;
      double[] buf = new double[64 * r.cols()];
      long n = 0;
      for (int m; (m = r.read(buf, 64)) > 0; ) n += m;
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
    if (code == 2) {
      assertThat(e).as(text).hasLineCount(1);
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

  /** Refusals that say the same in other words: the index's words, the edge jar's. */
  private static final String[][] WORDED_APART = {
      {"the CSV file is empty", "holds no rows (it is empty or blank)"},
      {"the CSV file has a header but no rows", "is taken as a header (column names, not numbers) and no row follows it"},
      {"is two whole numbers, the second without a sign", "is two whole numbers, the second without a sign"}};

  /**
   * The last {@link #index} and {@link #edge} refusals of {@code what} name the same place and the same
   * fault: the place exactly (the index names no row for a bad quote, the edge jar always does: then
   * the row is left out), the fault up to its first {@code ": "} or {@code "; "}, where each reader goes
   * on in its own words (a file to save, rows to write; the index's {@code header} option, which the
   * edge jar does not take), the edge jar's {@code ", the model's inputs"} left out. A file of another
   * width than the model's is refused by ood score before any row (the model's check, not this
   * reader's), by the edge jar at its row 0: that one only has to name a line.
   */
  private void assertNamedAlike(String what) {
    assertThat(lastErr).as(what).startsWith("stdin ");
    String edge = lastErr.strip().substring("stdin ".length());
    if (indexRefusal == null) {
      assertThat(edge).as(what).startsWith("line ");
      return;
    }
    if (edge.contains(WORDED_APART[2][1])) { // the documented difference: the edge jar decides on row 0, before a later bad row
      assertThat(edge).as(what).containsPattern("^line \\d+ \\(row 0\\): ");
      return;
    }
    for (String[] w : WORDED_APART)
      if (indexRefusal.contains(w[0])) {
        assertThat(edge).as(what + ": the index said " + indexRefusal).contains(w[1]);
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
}
