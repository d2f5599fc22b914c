package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.format.JsonWriterTest;
import io.actindex.index.meta.Where;
import io.actindex.query.MetaCsv;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.TreeSet;
import java.util.stream.Collectors;
import java.util.stream.IntStream;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The refusals of the command-line contract that issue 8 found escaping it (exit 1, a stack trace,
 * a huge message, or a silent answer), each made here and run through {@code Main.run}: exit code
 * 2, one line on stderr that names the option, file and line, at most a short quote, nothing on
 * stdout, every index file byte-identical (SHA-256) and no new index left behind.
 */
class ContractEndToEndTest {
  @TempDir Path tmp;
  Path idx, codes, query, regular;
  Map<String, String> before;
  static final int N = 40;

  @BeforeEach
  void buildIndex() {
    SplittableRandom rnd = new SplittableRandom(11);
    boolean[][] bits = new boolean[N][10];
    for (boolean[] row : bits) for (int b = 0; b < 10; b++) row[b] = rnd.nextBoolean();
    codes = Files2.bits(tmp.resolve("codes.npy"), bits);
    List<String> meta = new ArrayList<>(List.of("key,label,split"));
    for (int i = 0; i < N; i++) meta.add("k" + i + "," + (i % 3 == 0 ? "cat" : "dog") + "," + (i % 4 == 0 ? "test" : "train"));
    idx = tmp.resolve("idx");
    Cli.Result r = Cli.run("build", "--out", idx.toString(), "--codes", codes.toString(), "--code-layout", "h1:6,h2:4", "--meta",
        Files2.text(tmp.resolve("meta.csv"), meta).toString());
    assertThat(r.code()).as(r.describe()).isZero();
    query = Files2.bits(tmp.resolve("q.npy"), java.util.Arrays.copyOf(bits, 3));
    regular = Files2.text(tmp.resolve("plain.txt"), List.of("not an index"));
    before = Files2.checksums(idx);
  }

  /** Exit 2, one short line naming each of {@code mentions}, nothing on stdout, the index unchanged. */
  private void assertRefused(Cli.Result r, String... mentions) {
    String what = r.describe();
    assertThat(r.code()).as(what).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err().strip()).as(what + ": one line").doesNotContain("\n").doesNotContain("\r");
    assertThat(r.err().length()).as(what + ": a short message").isLessThan(600);
    assertThat(r.err()).as(what).doesNotContain("\tat ").doesNotContain("internal error").doesNotContain("Exception");
    for (String m : mentions) assertThat(r.err()).as(what).contains(m);
    assertThat(r.out()).as(what).isEmpty();
    assertThat(Files2.checksums(idx)).as(what + ": index unchanged").isEqualTo(before);
  }

  private Cli.Result nearest(String... more) {
    List<String> args = new ArrayList<>(List.of("nearest", "--index", idx.toString(), "--codes", query.toString()));
    args.addAll(List.of(more));
    return Cli.run(args.toArray(String[]::new));
  }

  @Test
  void badLayerListsAreRefusedByEveryCommand() {
    for (String layers : List.of("h1,h1", ",", "h1,,h2", "h2, h2")) {
      assertRefused(nearest("--layers", layers), "--layers");
      assertRefused(Cli.run("region", "--index", idx.toString(), "--codes", query.toString(), "--layers", layers), "--layers");
      assertRefused(Cli.run("census", "--index", idx.toString(), "--layers", layers), "--layers");
      Path out = tmp.resolve("new-" + layers.hashCode());
      assertRefused(Cli.run("build", "--out", out.toString(), "--codes", codes.toString(), "--code-layout", "h1:6,h2:4", "--layers",
          layers), "--layers");
      assertThat(out).doesNotExist();
    }
    assertRefused(nearest("--layers", "h1,nope"), "--layers: unknown layer 'nope'", "h1, h2");
    assertRefused(Cli.run("census", "--index", idx.toString(), "--layers", "nope"), "--layers: unknown layer 'nope'");
  }

  @Test
  void indexThatIsNotAnIndexFolder() throws Exception {
    Path empty = Files.createDirectories(tmp.resolve("empty"));
    Files.writeString(Files.createDirectories(tmp.resolve("other")).resolve("notes.txt"), "x");
    for (String bad : List.of(regular.toString(), "/dev/null", empty.toString(), tmp.resolve("other").toString())) {
      assertRefused(Cli.run("nearest", "--index", bad, "--codes", query.toString()), bad);
      assertRefused(Cli.run("region", "--index", bad, "--codes", query.toString()), bad);
      assertRefused(Cli.run("census", "--index", bad), bad);
      assertRefused(Cli.run("info", "--index", bad), bad);
      assertRefused(Cli.run("add", "--index", bad, "--codes", query.toString()), bad);
    }
    assertThat(Files.readString(regular)).isEqualTo("not an index\n");
    try (var s = Files.list(empty)) {
      assertThat(s.toList()).as("readers never write").isEmpty();
    }
  }

  @Test
  void buildUnderARegularFileIsRefused() throws Exception {
    for (Path out : List.of(regular.resolve("x"), regular.resolve("a/b"), regular)) {
      assertRefused(Cli.run("build", "--out", out.toString(), "--codes", codes.toString()), regular.toString());
      assertThat(Files.readString(regular)).isEqualTo("not an index\n");
    }
  }

  @Test
  void whereExpressionsBeyondTheLimitsAreRefusedAndLongInListsWork() throws Exception {
    String deep = "(".repeat(3000) + "label = cat" + ")".repeat(3000);
    assertRefused(nearest("--where", deep), "where: at position " + (Where.MAX_NESTING + 1), "nest more than");
    assertRefused(nearest("--where", "not ".repeat(30000) + "label = cat"), "where: at position", "nest more than");
    assertRefused(nearest("--where", "label = x or ".repeat(Where.MAX_CLAUSES) + "label = y"), "in (v1, v2, ...)");
    // 2,000 keys in one list: the answer equals the same search restricted to those keys another way
    TreeSet<Integer> chosen = new TreeSet<>();
    SplittableRandom rnd = new SplittableRandom(3);
    while (chosen.size() < 6) chosen.add(rnd.nextInt(N));
    String keys = IntStream.range(0, 2000).mapToObj(i -> chosen.contains(i) ? "k" + i : "absent" + i).collect(Collectors.joining(", "));
    Cli.Result longIn = nearest("--where", "key in (" + keys + ")", "-k", "40", "--format", "json");
    assertThat(longIn.code()).as(longIn.describe()).isZero();
    JsonNode doc = JsonWriterTest.STRICT.readTree(longIn.out());
    for (JsonNode r : doc.get("results")) {
      TreeSet<Integer> got = new TreeSet<>();
      for (JsonNode nb : r.get("neighbors")) got.add(nb.get("id").asInt());
      assertThat(got).isEqualTo(chosen);
    }
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  /** The metadata CSV's limits and encodings, through add (index unchanged) and build (nothing left behind). */
  @Test
  void metadataCsvLimitsAndEncodings() throws Exception {
    boolean[][] five = new boolean[5][10];
    Path more = Files2.bits(tmp.resolve("more.npy"), five);
    String rows = "x0,a\nx1,b\nx2,a\nx3,c\nx4,d\n";
    List<Object[]> cases = new ArrayList<>(); // file, what the message must hold
    String wideHeader = IntStream.range(0, 10_000).mapToObj(c -> "c" + c).collect(Collectors.joining(","));
    cases.add(new Object[] {Files2.write(tmp.resolve("wide.csv"), (wideHeader + "\n").getBytes(StandardCharsets.UTF_8)),
        "line 1: more than " + MetaCsv.MAX_COLUMNS + " columns"});
    cases.add(new Object[] {Files2.write(tmp.resolve("longline.csv"), ("key,label\nx0,a\nx1," + "b".repeat(3 << 20) + "\n")
        .getBytes(StandardCharsets.UTF_8)), "line 3 is longer than 1,048,576 bytes"});
    cases.add(new Object[] {Files2.write(tmp.resolve("bigcell.csv"), ("key,label\nx0,a\nx1,\"" + "ab\n".repeat(5000) + "\"\nx2,a\n")
        .getBytes(StandardCharsets.UTF_8)), "line 3, column 2: a cell longer than 10,000 characters, starting 'ab\\nab\\n"});
    cases.add(new Object[] {Files2.write(tmp.resolve("utf16.csv"), ("key,label\n" + rows).getBytes(StandardCharsets.UTF_16)),
        "line 1: the file is UTF-16"});
    cases.add(new Object[] {Files2.write(tmp.resolve("utf16le.csv"), ("key,label\n" + rows).getBytes(StandardCharsets.UTF_16LE)),
        "line 1: a NUL byte"});
    cases.add(new Object[] {Files2.write(tmp.resolve("latin1.csv"), ("key,label\nx0,a\nx1,caf\u00e9\n").getBytes(StandardCharsets.ISO_8859_1)),
        "line 3: not UTF-8 (byte 0xE9 after 'x1,caf')"});
    for (Object[] c : cases) {
      Path csv = (Path) c[0];
      String name = csv.getFileName().toString();
      assertRefused(Cli.run("add", "--index", idx.toString(), "--codes", more.toString(), "--meta", csv.toString()), name, (String) c[1]);
      Path out = tmp.resolve("b-" + name);
      assertRefused(Cli.run("build", "--out", out.toString(), "--codes", more.toString(), "--meta", csv.toString()), name, (String) c[1]);
      assertThat(out).doesNotExist();
    }
    // a UTF-8 byte order mark is fine, and so is non-ASCII UTF-8
    byte[] bom = {(byte) 0xEF, (byte) 0xBB, (byte) 0xBF};
    byte[] text = ("key,label\n" + rows.replace("x3,c", "x3,caf\u00e9")).getBytes(StandardCharsets.UTF_8);
    byte[] both = java.util.Arrays.copyOf(bom, bom.length + text.length);
    System.arraycopy(text, 0, both, bom.length, text.length);
    Cli.Result ok = Cli.run("add", "--index", idx.toString(), "--codes", more.toString(), "--meta",
        Files2.write(tmp.resolve("bom.csv"), both).toString());
    assertThat(ok.code()).as(ok.describe()).isZero();
    Cli.Result found = nearest("--where", "label = caf\u00e9 and key = x3", "--format", "json");
    assertThat(found.code()).as(found.describe()).isZero();
    assertThat(JsonWriterTest.STRICT.readTree(found.out()).get("results").get(0).get("neighbors").get(0).get("key").asText())
        .isEqualTo("x3");
  }
}
