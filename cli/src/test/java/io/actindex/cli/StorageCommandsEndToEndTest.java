package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.format.JsonWriterTest;
import java.io.RandomAccessFile;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.TreeSet;
import java.util.stream.Stream;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code delete}, {@code compact} and {@code check} through the command line: deletes by keys
 * (documented and synthesized "row-ID" keys) and by filter, compaction, then nearest compared with
 * a bit-by-bit scan written here; every bad input exits 2 with one line naming the file or option
 * and leaves the index byte-identical; readers never create a missing {@code meta/} folder.
 */
class StorageCommandsEndToEndTest {
  @TempDir Path tmp;
  Path idx;
  boolean[][] codes;
  TreeSet<Integer> live = new TreeSet<>();

  @BeforeEach
  void buildIndex() {
    SplittableRandom rnd = new SplittableRandom(11);
    codes = new boolean[300][70];
    for (boolean[] c : codes) for (int b = 0; b < c.length; b++) c[b] = rnd.nextInt(b % 5 == 0 ? 10 : 2) == 0;
    boolean[][] first = java.util.Arrays.copyOfRange(codes, 0, 200), second = java.util.Arrays.copyOfRange(codes, 200, 300);
    List<String> meta = new ArrayList<>(List.of("key,label"));
    for (int i = 0; i < 200; i++) meta.add("k" + i + "," + (i % 3 == 0 ? "a" : "b"));
    idx = tmp.resolve("idx");
    ok(Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c1.npy"), first).toString(),
        "--meta", Files2.text(tmp.resolve("m1.csv"), meta).toString()));
    ok(Cli.run("add", "--index", idx.toString(), "--codes", Files2.bits(tmp.resolve("c2.npy"), second).toString(), "--threads", "1"));
    for (int i = 0; i < 300; i++) live.add(i);
  }

  private static Cli.Result ok(Cli.Result r) {
    assertThat(r.code()).as(r.describe()).isZero();
    return r;
  }

  private static JsonNode json(Cli.Result r) throws Exception {
    ok(r);
    return JsonWriterTest.STRICT.readTree(r.out());
  }

  @Test
  void deleteCompactAndCheckKeepSearchExact() throws Exception {
    Path keys = Files2.text(tmp.resolve("keys.txt"), List.of("k5", "", "row-250", "k7"));
    JsonNode d = json(Cli.run("delete", "--index", idx.toString(), "--keys", keys.toString(), "--format", "json"));
    assertThat(d.get("deleted").asInt()).isEqualTo(3);
    assertThat(List.of(d.get("rewritten_segments").asInt(), d.get("dropped_codes").asInt())).as("a few deleted: no rewrite").isEqualTo(List.of(0, 0));
    live.removeAll(List.of(5, 7, 250));
    // the same list again: refused by default (a typo never deletes half a list), files unchanged
    Map<String, String> once = Files2.checksums(idx);
    Cli.Result refused = Cli.run("delete", "--index", idx.toString(), "--keys", keys.toString(), "--format", "json");
    assertThat(refused.code()).as(refused.describe()).isEqualTo(2);
    assertThat(refused.err()).contains(keys.toString()).contains("line 1: 'k5' is not a live example").contains("and 2 more")
        .contains("nothing deleted").contains("--skip-missing");
    assertThat(Files2.checksums(idx)).isEqualTo(once);
    // with --skip-missing (a rerun after a warning): nothing left to delete, exit 0, the keys named, no commit
    Cli.Result again = ok(Cli.run("delete", "--index", idx.toString(), "--keys", keys.toString(), "--format", "json", "--skip-missing"));
    assertThat(again.err().strip()).as(again.describe()).doesNotContain("\n")
        .contains("3 keys name no live example (deleted already, or never added)").contains("line 1: 'k5'")
        .contains("line 3: 'row-250'").contains("line 4: 'k7'");
    JsonNode a = JsonWriterTest.STRICT.readTree(again.out());
    assertThat(List.of(a.get("matched").asInt(), a.get("deleted").asInt(), a.get("not_live").asInt())).isEqualTo(List.of(0, 0, 3));
    assertThat(Files2.checksums(idx)).isEqualTo(once);
    d = json(Cli.run("delete", "--index", idx.toString(), "--where", "label = a", "--format", "json"));
    int labelledA = 0;
    for (int i = 0; i < 200; i += 3) if (live.remove(i)) labelledA++;
    assertThat(d.get("deleted").asInt()).isEqualTo(labelledA);
    assertThat(d.get("live").asInt()).isEqualTo(live.size());
    // the built segment (ids 0-199) now has 2 + 67 of its 200 codes deleted, past a quarter: rewritten without them
    assertThat(List.of(d.get("rewritten_segments").asInt(), d.get("dropped_codes").asInt())).isEqualTo(List.of(1, labelledA + 2));
    nearestMatchesScan();
    nearestMatchesScan("label = b", id -> id < 200 && id % 3 != 0); // labels and keys line up after the rewrite

    JsonNode c = json(Cli.run("compact", "--index", idx.toString(), "--format", "json", "--threads", "3"));
    assertThat(c.get("stored_after").asInt()).isEqualTo(live.size());
    assertThat(c.get("segments_after").asInt()).isLessThanOrEqualTo(c.get("segments_before").asInt());
    nearestMatchesScan();

    JsonNode report = json(Cli.run("check", "--index", idx.toString(), "--format", "json"));
    assertThat(report.get("ok").asBoolean()).isTrue();
    List<String> names = new ArrayList<>();
    report.get("files").forEach(f -> names.add(f.get("file").asText()));
    assertThat(names).anyMatch(n -> n.endsWith(".codes")).anyMatch(n -> n.endsWith(".tables"))
        .anyMatch(n -> n.startsWith("meta/")).contains("index");
  }

  @Test
  void infoPointsToCompactWhileThereIsMoreThanOneSegment() throws Exception {
    int segments = json(Cli.run("info", "--index", idx.toString(), "--format", "json")).get("segments").size();
    assertThat(segments).as("the fixture's build and add").isEqualTo(2);
    assertThat(ok(Cli.run("info", "--index", idx.toString())).out())
        .contains("a query searches each of the 2 segments").contains("'actindex compact' merges them into one");
    ok(Cli.run("compact", "--index", idx.toString()));
    assertThat(ok(Cli.run("info", "--index", idx.toString())).out()).doesNotContain("actindex compact");
  }

  @Test
  void aKeysFileSavedWithAByteOrderMarkAndCrlfDeletesItsKeys() throws Exception {
    // Windows editors write "\uFEFF" first and CRLF line ends; the BOM was read as part of the
    // first key, which was then "not in the index" (the metadata CSV accepts a BOM).
    Path keys = Files2.write(tmp.resolve("bom.txt"), "\uFEFFk5\r\nk7\r\n".getBytes(java.nio.charset.StandardCharsets.UTF_8));
    JsonNode d = json(Cli.run("delete", "--index", idx.toString(), "--keys", keys.toString(), "--format", "json"));
    assertThat(d.get("deleted").asInt()).isEqualTo(2);
    live.removeAll(List.of(5, 7));
    nearestMatchesScan();
  }

  /**
   * The metadata CSV given as the keys file: its lines are no keys, so nothing is deleted, and the
   * refusal says that the lines are CSV rows whose first cell is a live key; a file of plain keys
   * that are not live gets no such hint.
   */
  @Test
  void aMetadataCsvAsTheKeysFileIsToldApart() throws Exception {
    Path meta = Files2.text(tmp.resolve("meta.csv"), List.of("key,label", "k5,a", "k7,b"));
    Map<String, String> before = Files2.checksums(idx);
    Cli.Result r = Cli.run("delete", "--index", idx.toString(), "--keys", meta.toString());
    refused(r, "line 1: 'key,label' is not a live example");
    assertThat(r.err()).as(r.describe()).contains("; 2 of these lines are CSV rows whose first cell is a live example's key (line 2: 'k5,a'):"
        + " the keys file is read one whole line per key, not as a CSV file: list the keys alone, one per line");
    assertThat(Files2.checksums(idx)).isEqualTo(before);
    Cli.Result plain = Cli.run("delete", "--index", idx.toString(), "--keys", Files2.text(tmp.resolve("typo.txt"), List.of("k5x,a")).toString());
    refused(plain, "line 1: 'k5x,a' is not a live example");
    assertThat(plain.err()).as(plain.describe()).doesNotContain("CSV rows");
  }

  /**
   * The spaces (or a stray carriage return) around a key are not part of it, as in the metadata CSV:
   * a key line {@code '  k7 '} deletes k7 (it was refused, with a "did you mean 'k7'" hint); a key
   * of no live example still refuses the delete, naming its file and line.
   */
  @Test
  void aKeyWithSpacesAroundALiveKeyDeletesIt() throws Exception {
    Path keys = Files2.write(tmp.resolve("spaces.txt"), "k5\nk8x\n  k7 \nk9\r".getBytes(java.nio.charset.StandardCharsets.UTF_8));
    Map<String, String> before = Files2.checksums(idx);
    Cli.Result r = Cli.run("delete", "--index", idx.toString(), "--keys", keys.toString());
    refused(r, "keys file " + keys + " line 2: 'k8x' is not a live example");
    assertThat(r.err()).as(r.describe()).doesNotContain("more key(s)");
    assertThat(Files2.checksums(idx)).isEqualTo(before);
    Cli.Result skipped = ok(Cli.run("delete", "--index", idx.toString(), "--keys", keys.toString(), "--skip-missing", "--format", "json"));
    assertThat(json(skipped).get("deleted").asInt()).as(skipped.describe()).isEqualTo(3);
    assertThat(skipped.err()).as(skipped.describe()).contains("line 2: 'k8x'").doesNotContain("line 3").doesNotContain("line 4");
    live.removeAll(List.of(5, 7, 9));
    nearestMatchesScan();
  }

  /**
   * A keys file mixing live keys, keys deleted earlier, never-added keys (a typo, a stray byte order
   * mark) and ids never given out: refused as a whole by default (exit 2, files unchanged); with
   * --skip-missing the live ones are deleted, the others are skipped and named with their lines in
   * one note, exit 0; search stays exact. Over several seeds of which keys go where.
   */
  @Test
  void keysOfNoLiveExampleRefuseTheDeleteOrWithSkipMissingAreSkippedAndNamed() throws Exception {
    ok(Cli.run("delete", "--index", idx.toString(), "--keys", Files2.text(tmp.resolve("first.txt"), List.of("k3", "row-203")).toString()));
    live.removeAll(List.of(3, 203));
    Map<String, String> start = Files2.checksums(idx);
    for (long seed = 1; seed <= 4; seed++) {
      SplittableRandom rnd = new SplittableRandom(seed);
      List<String> lines = new ArrayList<>();
      List<Integer> wantGone = new ArrayList<>();
      List<String> wantSkipped = new ArrayList<>();
      for (int i = 0; i < 12; i++) {
        int kind = rnd.nextInt(4);
        String key;
        if (kind == 0) { // live: documented or bare
          int id = live.stream().skip(rnd.nextInt(live.size())).findFirst().orElseThrow();
          key = id < 200 ? "k" + id : "row-" + id;
          if (!wantGone.contains(id)) wantGone.add(id); // a key listed twice is deleted once, never skipped
        } else {
          key = switch (kind) {
            case 1 -> rnd.nextBoolean() ? "k3" : "row-203"; // deleted before
            case 2 -> "k" + rnd.nextInt(200) + "x"; // never added
            default -> "row-" + (300 + rnd.nextInt(50)); // an id never given out
          };
          wantSkipped.add("line " + (lines.size() + 1) + ": '" + key + "'");
        }
        lines.add(key);
      }
      Path keys = Files2.text(tmp.resolve("mixed" + seed + ".txt"), lines);
      if (!wantSkipped.isEmpty()) { // without --skip-missing the whole delete is refused, nothing changed
        Map<String, String> before = Files2.checksums(idx);
        Cli.Result refused = Cli.run("delete", "--index", idx.toString(), "--keys", keys.toString());
        assertThat(refused.code()).as("seed " + seed + " " + refused.describe()).isEqualTo(2);
        assertThat(refused.err()).as("seed " + seed).contains(wantSkipped.getFirst() + " is not a live example");
        assertThat(Files2.checksums(idx)).as("seed " + seed).isEqualTo(before);
      }
      Cli.Result r = ok(Cli.run("delete", "--index", idx.toString(), "--keys", keys.toString(), "--format", "json", "--skip-missing"));
      JsonNode d = JsonWriterTest.STRICT.readTree(r.out());
      String why = "seed " + seed + " keys " + lines + " " + r.describe();
      assertThat(d.get("deleted").asInt()).as(why).isEqualTo(wantGone.size());
      assertThat(d.get("not_live").asInt()).as(why).isEqualTo(wantSkipped.size());
      wantGone.forEach(live::remove);
      assertThat(d.get("live").asInt()).as(why).isEqualTo(live.size());
      if (wantSkipped.isEmpty()) assertThat(r.err()).as(why).doesNotContain("no live example");
      else {
        assertThat(r.err().strip()).as(why).doesNotContain("\n").contains(wantSkipped.size() + (wantSkipped.size() == 1 ? " key names" : " keys name"));
        for (String s : wantSkipped.subList(0, Math.min(5, wantSkipped.size()))) assertThat(r.err()).as(why).contains(s);
        if (wantSkipped.size() > 5) assertThat(r.err()).as(why).contains("and " + (wantSkipped.size() - 5) + " more");
      }
      nearestMatchesScan();
    }
    assertThat(Files2.checksums(idx)).isNotEqualTo(start);
    // a second byte order mark (files joined with cat) stays in the key; the note shows it escaped
    Path twoMarks = Files2.write(tmp.resolve("two-marks.txt"), "\uFEFFk1\n\uFEFFk2\n".getBytes(java.nio.charset.StandardCharsets.UTF_8));
    Cli.Result r = ok(Cli.run("delete", "--index", idx.toString(), "--keys", twoMarks.toString(), "--skip-missing"));
    assertThat(r.err()).as(r.describe()).contains("no live example").contains("line 2: '\\ufeffk2'");
  }

  private void nearestMatchesScan() throws Exception {
    nearestMatchesScan(null, id -> true);
  }

  /** nearest (with {@code --where where} unless null) against a scan over the live ids that {@code labelled} accepts. */
  private void nearestMatchesScan(String where, java.util.function.IntPredicate labelled) throws Exception {
    boolean[][] queries = {codes[1], codes[250], codes[299]};
    List<String> args = new ArrayList<>(List.of("nearest", "--index", idx.toString(), "--codes",
        Files2.bits(tmp.resolve("q" + System.nanoTime() + ".npy"), queries).toString(), "-k", "6", "--format", "json"));
    if (where != null) args.addAll(List.of("--where", where));
    JsonNode doc = json(Cli.run(args.toArray(String[]::new)));
    for (int q = 0; q < queries.length; q++) {
      List<int[]> want = new ArrayList<>();
      for (int id : live) if (labelled.test(id)) want.add(new int[] {distance(queries[q], codes[id]), id});
      want.sort((a, b) -> a[0] != b[0] ? Integer.compare(a[0], b[0]) : Integer.compare(a[1], b[1]));
      JsonNode got = doc.get("results").get(q).get("neighbors");
      assertThat(got.size()).isEqualTo(6);
      for (int i = 0; i < 6; i++) {
        assertThat(got.get(i).get("id").asInt()).as("query " + q + " rank " + i).isEqualTo(want.get(i)[1]);
        assertThat(got.get(i).get("distance").asInt()).isEqualTo(want.get(i)[0]);
        int id = want.get(i)[1];
        assertThat(got.get(i).get("key").asText()).isEqualTo(id < 200 ? "k" + id : "row-" + id);
      }
    }
  }

  private static int distance(boolean[] a, boolean[] b) {
    int d = 0;
    for (int i = 0; i < a.length; i++) if (a[i] != b[i]) d++;
    return d;
  }

  private static void refused(Cli.Result r, String mention) {
    assertThat(r.code()).as(r.describe()).isEqualTo(ExitCodes.USAGE);
    assertThat(r.err().strip()).as(r.describe()).doesNotContain("\n").doesNotContain("\tat ").contains(mention);
  }

  @Test
  void badInputsAreRefusedAndLeaveTheIndexUnchanged() throws Exception {
    Map<String, String> before = Files2.checksums(idx);
    Path unknown = Files2.text(tmp.resolve("unknown.txt"), List.of("k1", "nope"));
    refused(Cli.run("delete", "--index", idx.toString(), "--keys", tmp.resolve("missing.txt").toString()), "missing.txt");
    Path latin1 = Files2.write(tmp.resolve("latin1.txt"), new byte[] {'k', (byte) 0xe9, '\n'});
    refused(Cli.run("delete", "--index", idx.toString(), "--keys", latin1.toString()), "latin1.txt");
    refused(Cli.run("delete", "--index", idx.toString(), "--where", "label = "), "where");
    refused(Cli.run("delete", "--index", idx.toString(), "--where", "nosuchfield = 1"), "nosuchfield");
    // option conflicts are usage errors: exit 2, the error and the usual "--help" hint
    for (Cli.Result u : List.of(Cli.run("delete", "--index", idx.toString()),
        Cli.run("delete", "--index", idx.toString(), "--keys", unknown.toString(), "--where", "label = a"))) {
      assertThat(u.code()).as(u.describe()).isEqualTo(ExitCodes.USAGE);
      assertThat(u.err()).as(u.describe()).contains("--keys").contains("--where").doesNotContain("\tat ");
    }
    for (String cmd : List.of("delete", "compact", "check")) {
      List<String> args = new ArrayList<>(List.of(cmd, "--index", tmp.resolve("no-such-index").toString()));
      if (cmd.equals("delete")) args.addAll(List.of("--where", "label = a"));
      refused(Cli.run(args.toArray(String[]::new)), "no-such-index");
      Path file = Files2.text(tmp.resolve("plain-file"), List.of("x"));
      args.set(2, file.toString());
      refused(Cli.run(args.toArray(String[]::new)), "plain-file");
    }
    Path more = Files2.bits(tmp.resolve("more.npy"), new boolean[][] {codes[0]});
    for (String[] args : List.of(new String[] {"add", "--index", idx.toString(), "--codes", more.toString(), "--threads", "-1"},
        new String[] {"compact", "--index", idx.toString(), "--threads", "-2"},
        new String[] {"build", "--out", tmp.resolve("idx2").toString(), "--codes", more.toString(), "--threads", "-1"}))
      refused(Cli.run(args), "--threads must be 0 or more");
    assertThat(tmp.resolve("idx2")).doesNotExist();
    Path plain = Files2.text(tmp.resolve("plain-file"), List.of("x"));
    refused(Cli.run("build", "--out", plain.resolve("idx").toString(), "--codes",
        Files2.bits(tmp.resolve("one.npy"), new boolean[][] {codes[0]}).toString()), "plain-file");
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  @Test
  void checkNamesADamagedFileAndChangesNothing() throws Exception {
    Path codesFile;
    try (Stream<Path> s = Files.list(idx)) {
      codesFile = s.filter(p -> p.getFileName().toString().endsWith(".codes")).findFirst().orElseThrow();
    }
    flipMiddleBit(codesFile);
    Map<String, String> before = Files2.checksums(idx);
    Cli.Result r = Cli.run("check", "--index", idx.toString());
    refused(r, codesFile.getFileName().toString());
    assertThat(r.out()).contains("damaged").contains(codesFile.getFileName().toString());
    JsonNode doc = JsonWriterTest.STRICT.readTree(Cli.run("check", "--index", idx.toString(), "--format", "json").out());
    assertThat(doc.get("ok").asBoolean()).isFalse();
    String tablesName = codesFile.getFileName().toString().replace(".codes", ".tables");
    for (JsonNode f : doc.get("files")) { // only the codes file is damaged; its tables file could not be checked
      String name = f.get("file").asText();
      String want = name.equals(codesFile.getFileName().toString()) ? "damaged" : name.equals(tablesName) ? "not checked" : "ok";
      assertThat(f.get("status").asText()).as(name).isEqualTo(want);
    }
    refused(Cli.run("compact", "--index", idx.toString()), codesFile.getFileName().toString()); // merges check every byte
    assertThat(Files2.checksums(idx)).isEqualTo(before);
  }

  /**
   * What a killed add leaves (an orphan segment file, a temporary manifest, a Lucene commit no
   * manifest names, here junk) is listed by check as leftovers with their sizes, not as damage: exit
   * 0, the index still answers, and the next add removes exactly those check says it removes.
   */
  @Test
  void checkListsLeftoverFilesWithTheirSizesAndTheNextAddRemovesThem() throws Exception {
    String commit;
    try (Stream<Path> s = Files.list(idx.resolve("meta"))) {
      commit = s.map(p -> p.getFileName().toString()).filter(n -> n.startsWith("segments_")).findFirst().orElseThrow();
    }
    long gen = Long.parseLong(commit.substring(9), Character.MAX_RADIX);
    Map<String, Integer> left = new java.util.TreeMap<>(Map.of("seg-97.codes", 1234, "manifest-98.tmp", 77,
        "meta/segments_" + Long.toString(gen + 1, Character.MAX_RADIX), 40, "meta/_zz.cfs", 300, "notes.txt", 12));
    for (Map.Entry<String, Integer> f : left.entrySet()) Files2.write(idx.resolve(f.getKey()), new byte[f.getValue()]);
    Map<String, String> before = Files2.checksums(idx);

    Cli.Result table = ok(Cli.run("check", "--index", idx.toString()));
    for (Map.Entry<String, Integer> f : left.entrySet())
      assertThat(table.out()).as(table.describe()).containsPattern("(?m)^  " + java.util.regex.Pattern.quote(f.getKey())
          + " +" + f.getValue() + " +leftover$");
    assertThat(table.out()).contains("every file of the index is sound").contains("not part of the index")
        .contains("safe to delete").contains("notes.txt: 12 bytes, never removed by actindex")
        .contains("seg-97.codes: 1234 bytes, removed by the next add, delete or compact");
    JsonNode doc = json(Cli.run("check", "--index", idx.toString(), "--format", "json"));
    assertThat(doc.get("ok").asBoolean()).isTrue();
    Map<String, Integer> listed = new java.util.TreeMap<>();
    for (JsonNode f : doc.get("files"))
      if (f.get("status").asText().equals("leftover")) {
        listed.put(f.get("file").asText(), f.get("bytes").asInt());
        assertThat(f.get("ok").asBoolean()).isTrue();
        assertThat(f.get("removed_by_next_change").asBoolean()).as(f.toString()).isEqualTo(!f.get("file").asText().equals("notes.txt"));
      }
    assertThat(listed).isEqualTo(left);
    List<String> csv = ok(Cli.run("check", "--index", idx.toString(), "--format", "csv")).out().lines().toList();
    assertThat(csv.get(0)).isEqualTo("file,bytes,ok,problem,status");
    assertThat(csv).contains("seg-97.codes,1234,true,,leftover");
    assertThat(Files2.checksums(idx)).isEqualTo(before); // check never writes
    ok(Cli.run("nearest", "--index", idx.toString(), "--codes", Files2.bits(tmp.resolve("q.npy"), new boolean[][] {codes[3]}).toString()));

    ok(Cli.run("add", "--index", idx.toString(), "--codes", Files2.bits(tmp.resolve("c3.npy"), new boolean[][] {codes[1]}).toString()));
    for (String f : left.keySet()) assertThat(idx.resolve(f).toFile().exists()).as(f).isEqualTo(f.equals("notes.txt"));
    doc = json(Cli.run("check", "--index", idx.toString(), "--format", "json"));
    List<String> leftovers = new ArrayList<>();
    doc.get("files").forEach(f -> { if (f.get("status").asText().equals("leftover")) leftovers.add(f.get("file").asText()); });
    assertThat(leftovers).containsExactly("notes.txt");
  }

  /** Beside a stray commit, the manifest's own commit missing or damaged is still refused by name (exit 2), by every command. */
  @Test
  void theManifestsOwnCommitMissingOrDamagedIsRefusedByNameBesideAStrayOne() throws Exception {
    Path commit;
    try (Stream<Path> s = Files.list(idx.resolve("meta"))) {
      commit = s.filter(p -> p.getFileName().toString().startsWith("segments_")).findFirst().orElseThrow();
    }
    String name = commit.getFileName().toString();
    Path stray = commit.resolveSibling("segments_" + Long.toString(Long.parseLong(name.substring(9), Character.MAX_RADIX) + 1,
        Character.MAX_RADIX));
    Files.copy(commit, stray);
    byte[] bytes = Files.readAllBytes(commit);
    Path q = Files2.bits(tmp.resolve("q.npy"), new boolean[][] {codes[0]});
    for (boolean missing : new boolean[] {true, false}) {
      if (missing) Files.delete(commit);
      else Files2.write(commit, java.util.Arrays.copyOf(bytes, bytes.length - 5));
      Map<String, String> before = Files2.checksums(idx);
      refused(Cli.run("check", "--index", idx.toString()), name);
      refused(Cli.run("nearest", "--index", idx.toString(), "--codes", q.toString()), name);
      refused(Cli.run("add", "--index", idx.toString(), "--codes", q.toString()), name);
      assertThat(Files2.checksums(idx)).as("missing " + missing).isEqualTo(before);
    }
  }

  /**
   * Damage in a codes file too big for the open's full check (here every file counts as big) is
   * found by the merge that follows an add's commit: the add stands, so it exits 0 with a warning
   * naming the file, never a refusal that a script would answer by adding the rows a second time.
   */
  /**
   * With every file counted as big (its CRC computed while it is read, not before), a flipped bit
   * in the middle of the codes, the tables or the biggest metadata file still stops a query, info and an add before they
   * answer or write: exit 2 naming the file as damaged, nothing changed (an add into a damaged index
   * is refused up front, not committed and then warned about when its merge meets the damage).
   */
  @Test
  void aFlippedBitInsideABigFileStopsQueriesBeforeTheyAnswer() throws Exception {
    Path q = Files2.bits(tmp.resolve("q.npy"), new boolean[][] {codes[0]});
    Path more = Files2.bits(tmp.resolve("more.npy"), java.util.Arrays.copyOfRange(codes, 0, 40));
    System.setProperty(io.actindex.index.store.ChecksummedFile.SMALL_FILE_PROPERTY, "0");
    try {
      ok(Cli.run("nearest", "--index", idx.toString(), "--codes", q.toString()));
      String biggestMeta;
      try (Stream<Path> m = Files.list(idx.resolve("meta"))) {
        biggestMeta = "meta/" + m.max(java.util.Comparator.comparingLong(p -> p.toFile().length())).orElseThrow().getFileName();
      }
      for (String name : List.of("seg-0.codes", "seg-0.tables", biggestMeta)) {
        Path file = idx.resolve(name);
        byte[] pristine = Files.readAllBytes(file);
        flipMiddleBit(file);
        Map<String, String> before = Files2.checksums(idx);
        for (String[] args : List.of(new String[] {"nearest", "--index", idx.toString(), "--codes", q.toString()},
            new String[] {"info", "--index", idx.toString()},
            new String[] {"add", "--index", idx.toString(), "--codes", more.toString()})) {
          Cli.Result r = Cli.run(args);
          refused(r, name);
          assertThat(r.err()).as(r.describe()).contains("checksum mismatch");
        }
        assertThat(Files2.checksums(idx)).isEqualTo(before);
        refused(Cli.run("check", "--index", idx.toString()), name);
        Files.write(file, pristine);
      }
      ok(Cli.run("check", "--index", idx.toString()));
    } finally {
      System.clearProperty(io.actindex.index.store.ChecksummedFile.SMALL_FILE_PROPERTY);
    }
  }

  @Test
  void readersNeverCreateAMissingMetaFolderAndAFolderManifestIsRefused() throws Exception {
    Path q = Files2.bits(tmp.resolve("q.npy"), new boolean[][] {codes[0]});
    Path meta = idx.resolve("meta");
    try (Stream<Path> s = Files.walk(meta)) {
      for (Path p : s.sorted(java.util.Comparator.reverseOrder()).toList()) Files.delete(p);
    }
    refused(Cli.run("nearest", "--index", idx.toString(), "--codes", q.toString()), "meta");
    assertThat(meta).doesNotExist();
    refused(Cli.run("check", "--index", idx.toString()), "meta");
    assertThat(meta).doesNotExist();

    Path other = tmp.resolve("other");
    ok(Cli.run("build", "--out", other.toString(), "--codes", q.toString()));
    String newest;
    try (Stream<Path> s = Files.list(other)) {
      newest = s.map(p -> p.getFileName().toString()).filter(n -> n.matches("manifest-\\d+"))
          .max(java.util.Comparator.comparingLong(n -> Long.parseLong(n.substring(9)))).orElseThrow();
    }
    Path folder = other.resolve("manifest-" + (Long.parseLong(newest.substring(9)) + 1));
    Files.createDirectory(folder);
    refused(Cli.run("nearest", "--index", other.toString(), "--codes", q.toString()), folder.getFileName().toString());
    refused(Cli.run("check", "--index", other.toString()), folder.getFileName().toString());
  }

  /** Flips one bit in the middle of {@code file}. */
  private static void flipMiddleBit(Path file) throws java.io.IOException {
    try (RandomAccessFile raf = new RandomAccessFile(file.toFile(), "rw")) {
      long pos = raf.length() / 2;
      raf.seek(pos);
      int b = raf.read();
      raf.seek(pos);
      raf.write(b ^ 4);
    }
  }
}
