package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.core.BadInputException;
import io.actindex.core.DiskFull;
import io.actindex.core.OutputFiles;
import io.actindex.cli.format.JsonWriter;
import io.actindex.cli.format.TextTable;
import io.actindex.index.mih.PairSink;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.index.store.IndexReader;
import io.actindex.query.Dupes;
import io.actindex.query.QuerySource;
import io.actindex.query.Source;
import java.io.BufferedWriter;
import java.io.IOException;
import java.io.PrintWriter;
import java.io.UncheckedIOException;
import java.nio.channels.Channels;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/** {@code actindex dupes}: near-duplicate examples by Hamming distance between codes, grouped and flagged. */
@Command(name = "dupes", mixinStandardHelpOptions = true,
    description = {"Every pair of live examples whose codes are within --radius of each other (exact), grouped into"
        + " connected components; groups spanning several splits (leakage) or labels (conflicts) are flagged.",
        "With --against FILE: for each row of FILE, the indexed examples within --radius."})
final class DupesCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;

  @Option(names = "--radius", required = true, paramLabel = "R",
      description = "Largest Hamming distance of a pair (0 = identical codes), at most the code length.")
  int radius;

  @Option(names = "--where", paramLabel = "EXPR", description = "Only examples whose metadata match (both members of a pair).")
  String where;

  @Mixin LayersOption layers;

  @Option(names = "--cross-split",
      description = "List only groups spanning several splits; --pairs keeps pairs whose splits differ. Not with --against.")
  boolean crossSplit;

  @Option(names = "--conflicting-labels",
      description = "List only groups with several labels; --pairs keeps pairs whose labels differ (with --cross-split: either)."
          + " Not with --against.")
  boolean conflictingLabels;

  @Option(names = "--against", paramLabel = "FILE",
      description = "Rows to look up instead of joining the index with itself, of the kind the index was built from "
          + "(activations, codes or model inputs; see --kind), encoded the same way.")
  Path against;

  @Option(names = "--kind", paramLabel = "KIND",
      description = "What the --against file holds: activations, codes or inputs. Default: what the index was built from (for a model's index, "
          + "inputs or hidden activations by the file's width).")
  Source.Kind kind;

  @Option(names = "--pairs", paramLabel = "FILE",
      description = "Write every pair as CSV id_a,id_b,distance (id_a < id_b; with --against: row,id,distance).")
  Path pairs;

  @Option(names = "--groups", paramLabel = "N", defaultValue = "10", description = "Largest groups to list (not with --against). Default: ${DEFAULT-VALUE}.")
  int groups;

  @Option(names = "--threads", paramLabel = "N", defaultValue = "0",
      description = "Worker threads (the output order does not depend on it). Default: 0 = one per core.")
  int threads;

  @Mixin HeaderOption header;
  @Mixin FormatOption format;

  @Override
  public Integer call() {
    if (threads < 0) throw new ParameterException(spec.commandLine(), "--threads must be 0 or more, got " + threads);
    EmptyFilter.refuse(spec, where);
    if (groups < 0) throw new ParameterException(spec.commandLine(), "--groups must be 0 or more, got " + groups);
    if (against != null)
      GivenOptions.refuse(spec, "is about the groups of the self-join; --against lists each row's matches and forms no groups",
          "--cross-split", "--conflicting-labels", "--groups");
    if (against == null) GivenOptions.refuse(spec, "says what the --against file holds; give it with --against", "--kind");
    CsvMatrixReader.Header h = header.of(against);
    int t = threads == 0 ? Runtime.getRuntime().availableProcessors() : threads;
    Dupes.Params p = new Dupes.Params(radius, where, layers.layers, crossSplit, conflictingLabels, groups, t);
    Dupes.Result joined = null;
    Dupes.AgainstResult matched = null;
    int live, selected;
    List<String> columns;
    try (IndexReader reader = IndexReader.open(index.dir);
        PairsFile file = pairs == null ? null : new PairsFile(pairs, against == null ? "id_a,id_b,distance" : "row,id,distance", against);
        Progress bar = Progress.onTerminal(spec.commandLine().getErr(), against == null ? "joining" : "matching")) {
      PairSink sink = file == null ? null : file::pair;
      if (against == null) joined = Dupes.run(reader, p, sink, bar);
      else {
        matched = Dupes.against(reader, p, QuerySource.sourceOf(reader, kind, against, h, "--kind"), sink, bar);
      }
      if (file != null) file.commit();
      live = reader.liveCount();
      selected = joined != null ? joined.summary().examples() : matched.summary().examples();
      columns = reader.meta().columns();
    }
    index.noteIfEmpty(live, "--where", where, selected);
    if (matched != null) Summaries.notes(spec.commandLine().getErr(), matched.notes());
    if (matched != null && matched.summary().rows() == 0) // as nearest, region and ood score say it
      spec.commandLine().getErr().println("note: " + against + " holds no rows; the answer is empty");
    // "0 groups with conflicting labels" reads as a finding; with no labels in the index it is none (same for splits)
    if (against == null) {
      noteMissing(columns, "label", conflictingLabels, "--conflicting-labels", "conflicting labels");
      noteMissing(columns, "split", crossSplit, "--cross-split", "several splits");
    }
    PrintWriter out = spec.commandLine().getOut();
    if (joined != null) {
      switch (format.format) {
        case json -> json(out, joined);
        case csv -> csv(out, joined);
        case table -> table(out, joined);
      }
    } else {
      switch (format.format) {
        case json -> json(out, matched);
        case csv -> csv(out, matched);
        case table -> table(out, matched);
      }
    }
    out.flush();
    return ExitCodes.OK;
  }

  /**
   * A line on stderr when no example has a {@code role} value although the metadata has other
   * columns (e.g. labels under scikit-learn's name {@code target}) or {@code asked} (its flag given).
   */
  private void noteMissing(List<String> columns, String role, boolean asked, String flag, String what) {
    if (columns.contains(role) || (!asked && columns.stream().noneMatch(c -> !c.equals("key") && !c.equals("source")))) return;
    spec.commandLine().getErr().println("note: no example in " + index.dir + " has a " + role + " (a metadata column '" + role + "', or one named"
        + " at build with --" + role + "-column), so no group can have " + what + (asked ? "; " + flag + " lists none" : ""));
  }

  /** The pairs CSV, written to a temporary file beside it and moved into place only when complete. */
  private static final class PairsFile implements AutoCloseable {
    private final Path target;
    private final OutputFiles.Temp temp;
    private final BufferedWriter w;
    private final StringBuilder line = new StringBuilder(32);
    private boolean committed;

    PairsFile(Path target, String header, Path against) {
      this.target = target;
      OutputFiles.checkTarget(target, "--pairs", new OutputFiles.Input("--against", against));
      OutputFiles.Temp t = null;
      try {
        t = OutputFiles.begin(target);
        w = new BufferedWriter(Channels.newWriter(t.channel(), StandardCharsets.UTF_8));
        w.write(header);
        w.write('\n');
      } catch (IOException e) {
        RuntimeException f = failure(e); // before the temporary file's space is freed
        try {
          if (t != null) t.close();
        } catch (IOException suppressed) {
          e.addSuppressed(suppressed);
        }
        throw f;
      }
      this.temp = t;
    }

    void pair(int a, int b, int d) {
      line.setLength(0);
      line.append(a).append(',').append(b).append(',').append(d).append('\n');
      try {
        w.append(line);
      } catch (IOException e) {
        throw failure(e);
      }
    }

    void commit() {
      try {
        w.flush();
        temp.commit();
        committed = true;
      } catch (IOException e) {
        throw failure(e);
      }
    }

    private RuntimeException failure(IOException e) {
      if (DiskFull.in(e, target)) return DiskFull.refusal(target.toString(), "the pairs file was not written (a file already there is unchanged)", e);
      return new UncheckedIOException("cannot write " + target + ": " + e.getMessage(), e);
    }

    @Override
    public void close() {
      if (committed) return;
      try {
        temp.close(); // the writer's unflushed rest goes with it
      } catch (IOException ignored) {
        // failing already; the temporary file is all that is left
      }
    }
  }

  // ------------------------------------------------------------------ self-join output

  /** {"summary": {...}, "groups": [{"size", "distinct_codes", "max_distance", "cross_split", ...}]}. */
  private static void json(PrintWriter out, Dupes.Result r) {
    Dupes.Summary s = r.summary();
    JsonWriter j = new JsonWriter(out).beginObject().name("summary").beginObject()
        .member("examples", s.examples()).member("bits", s.bits()).member("radius", s.radius())
        .member("pairs", s.pairs()).member("exact_duplicate_pairs", s.exactDuplicatePairs())
        .member("duplicated_examples", s.duplicatedExamples()).member("groups", s.groups())
        .member("largest_group", s.largestGroup()).member("examples_in_groups", s.examplesInGroups())
        .member("cross_split_groups", s.crossSplitGroups()).member("conflicting_groups", s.conflictingGroups())
        .member("flagged_pairs", s.flaggedPairs()).member("pairs_written", s.pairsWritten()).member("tables", s.tables()).member("seconds", s.seconds())
        .endObject().name("groups").beginArray();
    for (Dupes.Group g : r.groups()) {
      j.beginObject().member("size", g.size()).member("distinct_codes", g.distinctCodes()).member("max_distance", g.maxDistance())
          .name("cross_split").value(g.crossSplit()).name("conflicting_labels").value(g.conflictingLabels())
          .name("labels").beginObject();
      for (Map.Entry<String, Integer> e : g.labels().entrySet()) j.member(e.getKey(), e.getValue());
      j.endObject().name("splits").beginObject();
      for (Map.Entry<String, Integer> e : g.splits().entrySet()) j.member(e.getKey(), e.getValue());
      j.endObject().name("members").beginArray();
      for (Dupes.Member m : g.members())
        j.beginObject().member("id", m.id()).member("key", m.key()).member("label", m.label()).member("split", m.split()).endObject();
      j.endArray().endObject();
    }
    j.endArray().endObject();
    out.println();
  }

  /** One row per listed group (the summary is in the table and JSON forms). */
  private static void csv(PrintWriter out, Dupes.Result r) {
    CsvWriter csv = new CsvWriter(out, List.of("group", "size", "distinct_codes", "max_distance", "cross_split",
        "conflicting_labels", "labels", "splits", "keys"));
    int i = 1;
    for (Dupes.Group g : r.groups())
      csv.row(List.of(Integer.toString(i++), Integer.toString(g.size()), Integer.toString(g.distinctCodes()),
          Integer.toString(g.maxDistance()), Boolean.toString(g.crossSplit()), Boolean.toString(g.conflictingLabels()),
          CsvWriter.list(CsvWriter.counted(g.labels())), CsvWriter.list(CsvWriter.counted(g.splits())), CsvWriter.list(keys(g.members()))));
  }

  private String flagLabel() {
    if (crossSplit && conflictingLabels) return "pairs across splits or with conflicting labels";
    return crossSplit ? "pairs across splits" : "pairs with conflicting labels";
  }

  private void table(PrintWriter out, Dupes.Result r) {
    Dupes.Summary s = r.summary();
    boolean flagged = crossSplit || conflictingLabels;
    out.printf(Locale.ROOT, "%,d examples joined within radius %d (%d bits): %,d pairs, %,d groups%n", s.examples(), s.radius(),
        s.bits(), s.pairs(), s.groups());
    TextTable t = new TextTable(List.of("summary", "value"));
    t.row(List.of("pairs", num(s.pairs())));
    t.row(List.of("exact duplicate pairs", num(s.exactDuplicatePairs())));
    t.row(List.of("examples sharing their code", num(s.duplicatedExamples())));
    t.row(List.of("groups", num(s.groups())));
    t.row(List.of("largest group", num(s.largestGroup())));
    t.row(List.of("examples in groups", num(s.examplesInGroups())));
    t.row(List.of("groups spanning splits (leakage)", num(s.crossSplitGroups())));
    t.row(List.of("groups with conflicting labels", num(s.conflictingGroups())));
    if (flagged) t.row(List.of(flagLabel(), num(s.flaggedPairs())));
    t.row(List.of("pairs written", num(s.pairsWritten())));
    t.row(List.of("time", String.format(Locale.ROOT, "%.2f s", s.seconds())));
    t.print(out, "  ");
    if (r.groups().isEmpty()) return;
    out.println();
    out.println("largest groups" + (flagged ? " with " + (crossSplit ? "leakage" : "") + (crossSplit && conflictingLabels ? " or " : "")
        + (conflictingLabels ? "conflicting labels" : "") : "") + (r.groups().size() < s.groups() ? " (" + r.groups().size() + " shown)" : ""));
    TextTable g = new TextTable(List.of("#", "size", "codes", "max dist", "flags", "labels", "splits", "keys"));
    int i = 1;
    for (Dupes.Group x : r.groups()) {
      List<String> flags = new ArrayList<>();
      if (x.crossSplit()) flags.add("leak");
      if (x.conflictingLabels()) flags.add("conflict");
      g.row(List.of(Integer.toString(i++), num(x.size()), num(x.distinctCodes()), Integer.toString(x.maxDistance()),
          String.join(",", flags), counts(x.labels()), counts(x.splits()),
          String.join(" ", keys(x.members())) + (x.size() > x.members().size() ? " ..." : "")));
    }
    g.print(out, "  ");
  }

  // ------------------------------------------------------------------ --against output

  private static void json(PrintWriter out, Dupes.AgainstResult r) {
    Dupes.AgainstSummary s = r.summary();
    JsonWriter j = new JsonWriter(out).beginObject().name("summary").beginObject()
        .member("examples", s.examples()).member("bits", s.bits()).member("radius", s.radius())
        .member("rows", s.rows()).member("rows_with_matches", s.rowsWithMatches()).member("rows_without", s.rowsWithout())
        .member("matches", s.matches()).member("tables", s.tables()).member("seconds", s.seconds())
        .endObject().name("rows").beginArray();
    for (Dupes.RowMatches m : r.rows()) {
      j.beginObject().member("row", m.row()).member("count", m.count()).name("matches").beginArray();
      for (Dupes.Match x : m.matches())
        j.beginObject().member("id", x.id()).member("key", x.key()).member("distance", x.distance())
            .member("label", x.label()).member("split", x.split()).endObject();
      j.endArray().endObject();
    }
    j.endArray().endObject();
    out.println();
  }

  private static void csv(PrintWriter out, Dupes.AgainstResult r) {
    CsvWriter csv = new CsvWriter(out, List.of("row", "count", "id", "key", "distance", "label", "split"));
    for (Dupes.RowMatches m : r.rows())
      for (Dupes.Match x : m.matches())
        csv.row(List.of(Long.toString(m.row()), Integer.toString(m.count()), Integer.toString(x.id()), str(x.key()),
            Integer.toString(x.distance()), str(x.label()), str(x.split())));
  }

  private static void table(PrintWriter out, Dupes.AgainstResult r) {
    Dupes.AgainstSummary s = r.summary();
    out.printf(Locale.ROOT, "%,d rows looked up within radius %d (%d bits) among %,d examples: %,d rows have a match, %,d have none "
        + "(%,d matches, %.2f s)%n", s.rows(), s.radius(), s.bits(), s.examples(), s.rowsWithMatches(), s.rowsWithout(), s.matches(),
        s.seconds());
    if (r.rows().isEmpty()) return;
    TextTable t = new TextTable(List.of("row", "matches", "closest", "distance", "label", "split"));
    for (Dupes.RowMatches m : r.rows()) {
      Dupes.Match c = m.matches().get(0);
      t.row(List.of(Long.toString(m.row()), num(m.count()), str(c.key()), Integer.toString(c.distance()), str(c.label()), str(c.split())));
    }
    t.print(out, "  ");
  }

  /** Table cell: {@code NAME:COUNT} items separated by spaces, names quoted when they hold a space, comma or colon. */
  private static String counts(Map<String, Integer> m) {
    List<String> items = new ArrayList<>(m.size());
    m.forEach((name, n) -> items.add(TextTable.item(name) + ":" + n));
    return String.join(" ", items);
  }

  private static List<String> keys(List<Dupes.Member> ms) {
    List<String> ks = new ArrayList<>();
    for (Dupes.Member m : ms) ks.add(str(m.key()));
    return ks;
  }

  private static String num(long v) {
    return String.format(Locale.ROOT, "%,d", v);
  }

  private static String str(String s) {
    return s == null ? "" : s;
  }
}
