package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.format.JsonWriterTest;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.text.Normalizer;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import java.util.stream.Stream;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Keys holding commas, quotes, semicolons, backslashes, parentheses, line breaks, non-ASCII text in
 * either Unicode form and no-break spaces, through the command line as docs/where.md,
 * docs/commands/delete.md and the metadata rules of docs/reference.md describe them: the metadata
 * CSV unquotes them, {@code --where} reaches each one as a quoted value, a keys file names each one
 * as it is (a line is not CSV), keys keep the Unicode form they were written in, whitespace around a
 * key is dropped but a no-break space is not whitespace, and a key with a line break is reached by
 * {@code --where} alone.
 */
class KeysWithSymbolsEndToEndTest {
  static final String NFC = Normalizer.normalize("café", Normalizer.Form.NFC), NFD = Normalizer.normalize("café", Normalizer.Form.NFD);
  /** The metadata CSV's key cells as written, and the keys they give (row i, id i). */
  static final List<String> CELLS = List.of("\"a,b\"", "\"say \"\"hi\"\"\"", "it's", NFC, NFD, "日本", "x;y", "a\\b",
      "\u00A0nb\u00A0", "\"l1\nl2\"", " plain\u3000", "(p)");
  static final List<String> KEYS = List.of("a,b", "say \"hi\"", "it's", NFC, NFD, "日本", "x;y", "a\\b", "\u00A0nb\u00A0", "l1\nl2",
      "plain", "(p)");
  static final int LINE_BREAK = 9;

  @TempDir Path tmp;
  Path idx, acts;

  @BeforeEach
  void build() {
    idx = tmp.resolve("idx");
    acts = Files2.floats(tmp.resolve("acts.npy"), SourcesEndToEndTest.activations(KEYS.size(), 8, new SplittableRandom(7)));
    List<String> meta = new ArrayList<>(List.of("key,label"));
    for (String c : CELLS) meta.add(c + ",x");
    ok(Cli.run("build", "--out", idx.toString(), "--activations", acts.toString(), "--meta", Files2.text(tmp.resolve("m.csv"), meta).toString()));
  }

  @Test
  void whereReachesEveryKeyQuotedAndOnlyIt() throws Exception {
    for (int i = 0; i < KEYS.size(); i++) {
      String quoted = "'" + KEYS.get(i).replace("\\", "\\\\").replace("'", "\\'") + "'";
      assertThat(where("key = " + quoted)).as(quoted).containsExactly(i);
      assertThat(where("key in (" + quoted + ", zz)")).as(quoted).containsExactly(i);
    }
    assertThat(where("key = " + NFC)).containsExactly(3); // a bare word, each form to its own key
    assertThat(where("key = " + NFD)).containsExactly(4);
    assertThat(where("key = \"say \\\"hi\\\"\"")).containsExactly(1);
    assertThat(where("key = a\\b")).containsExactly(7); // a backslash in a bare word is itself
    assertThat(where("key = 'plain\u3000'")).containsExactly(10); // other Unicode spaces go
    assertThat(where("key = nb")).isEmpty(); // no-break spaces stay part of the key
  }

  @Test
  void aKeysFileNamesEachKeyAsItIs() throws Exception {
    // every key but the one with a line break, written as it is, some with whitespace around
    List<String> lines = new ArrayList<>();
    for (int i = 0; i < KEYS.size(); i++) if (i != LINE_BREAK) lines.add(i % 3 == 0 ? "  " + KEYS.get(i) + "\t\r" : KEYS.get(i));
    JsonNode d = delete(copy("all"), lines, false);
    assertThat(d.get("deleted").asInt()).isEqualTo(KEYS.size() - 1);
    assertThat(d.get("live").asInt()).isEqualTo(1);
    // the key with a line break: by --where only
    JsonNode w = json(Cli.run("delete", "--index", tmp.resolve("all").toString(), "--where", "key = 'l1\nl2'", "--format", "json"));
    assertThat(w.get("deleted").asInt()).isEqualTo(1);
    assertThat(w.get("live").asInt()).isZero();

    // a CSV-quoted line names a key with the quotes; the other Unicode form or no-break spaces left out name no key
    Path some = copy("some");
    JsonNode s = delete(some, List.of("\"a,b\"", "nb", "cafe", NFC), true);
    assertThat(s.get("deleted").asInt()).isEqualTo(1);
    assertThat(s.get("not_live").asInt()).isEqualTo(3);
    Cli.Result near = ok(Cli.run("nearest", "--index", some.toString(), "--activations", acts.toString(), "--rows", "0", "-k", "50",
        "--format", "json"));
    assertThat(ids(JsonWriterTest.STRICT.readTree(near.out()))).doesNotContain(3).contains(0, 4, 8).hasSize(KEYS.size() - 1);
  }

  private List<Integer> where(String expr) throws Exception {
    return ids(json(Cli.run("nearest", "--index", idx.toString(), "--activations", acts.toString(), "--rows", "0", "-k", "50",
        "--where", expr, "--format", "json")));
  }

  private static List<Integer> ids(JsonNode near) {
    List<Integer> ids = new ArrayList<>();
    for (JsonNode n : near.get("results").get(0).get("neighbors")) ids.add(n.get("id").asInt());
    return ids.stream().sorted().toList();
  }

  private JsonNode delete(Path dir, List<String> lines, boolean skipMissing) throws Exception {
    Path keys = Files2.write(tmp.resolve("keys-" + dir.getFileName() + ".txt"), (String.join("\n", lines) + "\n").getBytes(StandardCharsets.UTF_8));
    List<String> args = new ArrayList<>(List.of("delete", "--index", dir.toString(), "--keys", keys.toString(), "--format", "json"));
    if (skipMissing) args.add("--skip-missing");
    return json(Cli.run(args.toArray(String[]::new)));
  }

  private Path copy(String name) {
    Path to = tmp.resolve(name);
    try (Stream<Path> files = Files.walk(idx)) {
      for (Path f : files.toList()) Files.copy(f, to.resolve(idx.relativize(f).toString()));
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    return to;
  }

  private static Cli.Result ok(Cli.Result r) {
    assertThat(r.code()).as(r.describe()).isZero();
    return r;
  }

  private static JsonNode json(Cli.Result r) throws Exception {
    return JsonWriterTest.STRICT.readTree(ok(r).out());
  }
}
