package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.IdSet;
import io.actindex.index.meta.Where;
import io.actindex.index.mih.DistinctCodes;
import io.actindex.index.mih.PairSink;
import io.actindex.index.mih.RadiusMatcher;
import io.actindex.index.mih.SelfJoin;
import io.actindex.index.store.IndexReader;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import org.roaringbitmap.RoaringBitmap;

/**
 * Near-duplicates as the model sees them: every pair of live examples whose codes are within
 * Hamming distance {@code radius} (exact, each pair once), grouped into connected components, with
 * the groups that span several splits (leakage) or carry different labels (label conflicts) flagged.
 * Or, with {@link #against}, the indexed examples within the radius of each row of another file.
 *
 * <pre>{@code
 * try (IndexReader r = IndexReader.open(dir)) {
 *   Dupes.Result res = Dupes.run(r, new Dupes.Params(2, "split in (train, test)", null, false, false, 10, 2),
 *       (a, b, d) -> System.out.println(a + "," + b + "," + d), Progress.NONE);
 * }
 * }</pre>
 */
public final class Dupes {
  private Dupes() {}

  /** Members listed per group (and matches per row of {@link #against}), smallest ids first. */
  public static final int SHOWN = 20;

  /**
   * {@code radius} 0..code length (of the chosen layers); {@code where} a filter both members must
   * match, or null; {@code layers} the layers joined on (null or empty = all); {@code crossSplit} /
   * {@code conflictingLabels}: list only groups with that flag, and stream only pairs whose members
   * differ in split / label (both: either); {@code groups} how many of the largest groups to list;
   * {@code threads >= 1}.
   */
  public record Params(int radius, String where, List<String> layers, boolean crossSplit, boolean conflictingLabels,
      int groups, int threads) {
    public Params {
      if (radius < 0) throw new BadParameterException("radius", " must be at least 0, got " + radius);
      if (groups < 0) throw new BadParameterException("groups", " must be at least 0, got " + groups);
      Parallel.checkThreads(threads);
      layers = layers == null ? List.of() : List.copyOf(layers);
    }
  }

  /** One example of a group. */
  public record Member(int id, String key, String label, String split) {}

  /**
   * A connected component of the within-radius relation: {@code size} examples holding {@code
   * distinctCodes} different codes; {@code maxDistance} the largest distance among the pairs found
   * in it (0 for identical codes; not the diameter); label and split counts; the first {@link
   * #SHOWN} members by id.
   */
  public record Group(int size, int distinctCodes, int maxDistance, boolean crossSplit, boolean conflictingLabels,
      Map<String, Integer> labels, Map<String, Integer> splits, List<Member> members) {}

  /**
   * {@code examples} joined (live, matching the filter), over {@code bits} bits; {@code pairs} within
   * the radius, {@code exactDuplicatePairs} of them at distance 0; {@code duplicatedExamples}:
   * examples sharing their code with another; {@code groups}, the {@code largestGroup} and {@code
   * examplesInGroups}; groups spanning several splits and with several labels; {@code flaggedPairs}
   * the pairs that cross splits or disagree on labels, as the flag options ask (-1 without a flag
   * option); {@code pairsWritten} (after the flag filters; 0 without a pair sink); {@code tables} the hash tables used (0: exact
   * hashing or a scan); wall-clock {@code seconds}.
   */
  public record Summary(int examples, int bits, int radius, long pairs, long exactDuplicatePairs, int duplicatedExamples,
      int groups, int largestGroup, int examplesInGroups, int crossSplitGroups, int conflictingGroups, long flaggedPairs,
      long pairsWritten, int tables, double seconds) {}

  /** The summary and the listed groups (largest first, ties by smallest id). */
  public record Result(Summary summary, List<Group> groups) {}

  /**
   * The join. {@code pairs} (nullable) gets every pair as ids {@code a < b} on the calling thread,
   * without them being kept, in the deterministic order of {@link SelfJoin#forEachPair} (not sorted);
   * with the flag options only the pairs that differ in split or label.
   */
  public static Result run(IndexReader reader, Params p, PairSink pairs, Progress progress) {
    long started = System.nanoTime();
    Progress prog = progress == null ? Progress.NONE : progress;
    Selection sel = select(reader, p);
    SelfJoin join = SelfJoin.build(sel.codes, p.radius());
    DistinctCodes dc = join.distinct();
    int n = sel.ids.length, nd = dc.count();
    // union-find over distinct codes; the largest pair distance per root
    int[] parent = new int[nd], maxDist = new int[nd];
    for (int u = 0; u < nd; u++) parent[u] = u;
    LabelIndex labels = LabelIndex.of(reader.meta(), reader.maxId()), splits = LabelIndex.of(reader.meta(), reader.maxId(), "split");
    // one pass: distinct pairs feed the union-find, ordinal pairs the sink
    long[] pairCount = {dc.identicalPairs()}, written = {0}, flaggedPairs = {0};
    boolean flagged = p.crossSplit() || p.conflictingLabels();
    int[] ids = sel.ids;
    // ordinal pairs are needed for the sink, and to count the flagged pairs
    PairSink ordinals = pairs == null && !flagged ? null : (a, b, d) -> {
      if (flagged) {
        boolean cross = p.crossSplit() && differ(splits.number(ids[a]), splits.number(ids[b]));
        boolean conflict = p.conflictingLabels() && differ(labels.number(ids[a]), labels.number(ids[b]));
        if (!cross && !conflict) return;
        flaggedPairs[0]++;
      }
      if (pairs == null) return;
      written[0]++;
      pairs.pair(ids[a], ids[b], d);
    };
    join.forEachPair(p.threads(), ordinals, (u, v, d) -> {
      pairCount[0] += (long) dc.holders(u) * dc.holders(v);
      int a = find(parent, u), b = find(parent, v);
      int max = Math.max(d, Math.max(maxDist[a], maxDist[b]));
      if (a != b) parent[Math.max(a, b)] = Math.min(a, b);
      maxDist[Math.min(a, b)] = max;
    }, (done, total) -> prog.update(done, total));
    int[] size = new int[nd], firstLabel = new int[nd], firstSplit = new int[nd], firstMember = new int[nd];
    boolean[] labelConflict = new boolean[nd], splitConflict = new boolean[nd];
    Arrays.fill(firstLabel, -1);
    Arrays.fill(firstSplit, -1);
    Arrays.fill(firstMember, -1);
    int duplicated = 0;
    for (int i = 0; i < n; i++) {
      int u = dc.distinctOf(i), root = find(parent, u);
      if (dc.holders(u) > 1) duplicated++;
      if (size[root]++ == 0) firstMember[root] = i;
      labelConflict[root] |= differs(firstLabel, root, labels.number(sel.ids[i]));
      splitConflict[root] |= differs(firstSplit, root, splits.number(sel.ids[i]));
    }
    List<Integer> roots = new ArrayList<>();
    int largest = 0, inGroups = 0, crossGroups = 0, conflictGroups = 0;
    for (int u = 0; u < nd; u++) {
      if (parent[u] != u || size[u] < 2) continue;
      roots.add(u);
      largest = Math.max(largest, size[u]);
      inGroups += size[u];
      if (splitConflict[u]) crossGroups++;
      if (labelConflict[u]) conflictGroups++;
    }
    List<Integer> listed = new ArrayList<>();
    for (int r : roots)
      if (!flagged || (p.crossSplit() && splitConflict[r]) || (p.conflictingLabels() && labelConflict[r])) listed.add(r);
    listed.sort((a, b) -> size[a] != size[b] ? Integer.compare(size[b], size[a]) : Integer.compare(firstMember[a], firstMember[b]));
    listed = listed.subList(0, Math.min(p.groups(), listed.size()));
    List<Group> groups = groups(reader, sel, dc, parent, listed, size, maxDist, splitConflict, labelConflict, labels, splits);
    Summary s = new Summary(n, sel.codes.layout().bits(), p.radius(), pairCount[0], dc.identicalPairs(), duplicated, roots.size(),
        largest, inGroups, crossGroups, conflictGroups, flagged ? flaggedPairs[0] : -1, written[0], join.tables(), (System.nanoTime() - started) / 1e9);
    return new Result(s, groups);
  }

  private static boolean differ(int a, int b) {
    return a >= 0 && b >= 0 && a != b;
  }

  /** Records the first value seen for {@code root}; true if {@code value} differs from it. */
  private static boolean differs(int[] first, int root, int value) {
    if (value < 0) return false;
    if (first[root] < 0) first[root] = value;
    return first[root] != value;
  }

  static int find(int[] parent, int x) {
    while (parent[x] != x) {
      parent[x] = parent[parent[x]];
      x = parent[x];
    }
    return x;
  }

  private static List<Group> groups(IndexReader reader, Selection sel, DistinctCodes dc, int[] parent, List<Integer> listed,
      int[] size, int[] maxDist, boolean[] splitConflict, boolean[] labelConflict, LabelIndex labels, LabelIndex splits) {
    Map<Integer, Integer> slot = new HashMap<>();
    for (int r : listed) slot.put(r, slot.size());
    List<List<Member>> members = new ArrayList<>();
    List<Map<String, Integer>> labelCounts = new ArrayList<>(), splitCounts = new ArrayList<>();
    List<RoaringBitmap> codes = new ArrayList<>();
    for (int i = 0; i < listed.size(); i++) {
      members.add(new ArrayList<>());
      labelCounts.add(new HashMap<>());
      splitCounts.add(new HashMap<>());
      codes.add(new RoaringBitmap());
    }
    for (int i = 0; i < sel.ids.length && !slot.isEmpty(); i++) {
      int u = dc.distinctOf(i);
      Integer g = slot.get(find(parent, u));
      if (g == null) continue;
      int id = sel.ids[i];
      String label = labels.label(id), split = splits.label(id);
      if (label != null) labelCounts.get(g).merge(label, 1, Integer::sum);
      if (split != null) splitCounts.get(g).merge(split, 1, Integer::sum);
      codes.get(g).add(u);
      if (members.get(g).size() < SHOWN) {
        Map<String, String> doc = reader.meta().document(id);
        members.get(g).add(new Member(id, doc == null ? null : doc.get("key"), label, split));
      }
    }
    List<Group> out = new ArrayList<>();
    for (int i = 0; i < listed.size(); i++) {
      int r = listed.get(i);
      out.add(new Group(size[r], codes.get(i).getCardinality(), maxDist[r], splitConflict[r], labelConflict[r],
          Region.sortedCounts(labelCounts.get(i)), Region.sortedCounts(splitCounts.get(i)), List.copyOf(members.get(i))));
    }
    return List.copyOf(out);
  }

  // ------------------------------------------------------------------ against another file

  /** One indexed example within the radius of a row. */
  public record Match(int id, String key, int distance, String label, String split) {}

  /** A row of the file with {@code count} matches; {@code matches}: the closest {@link #SHOWN} (distance, then id). */
  public record RowMatches(long row, int count, List<Match> matches) {}

  /** {@code rows} of the file, how many have a match, {@code matches} in all, and the joined {@code examples}. */
  public record AgainstSummary(int examples, int bits, int radius, long rows, long rowsWithMatches, long rowsWithout,
      long matches, int tables, double seconds) {}

  /** The summary, the rows with a match, and how the file was read ({@link QueryCodes#notes()}, e.g. its CSV header). */
  public record AgainstResult(AgainstSummary summary, List<RowMatches> rows, List<String> notes) {}

  /**
   * For each row of {@code source} (encoded as the index was built), the live examples (matching the
   * filter) within the radius on the chosen layers. {@code pairs} (nullable) gets (row, id, distance)
   * for every match, by row then id. Flag options do not apply here.
   */
  public static AgainstResult against(IndexReader reader, Params p, Source source, PairSink pairs, Progress progress) {
    Progress prog = progress == null ? Progress.NONE : progress;
    Selection sel = select(reader, p); // refuses a bad radius, filter or layer before the file is read
    return against(reader, p, sel, QuerySource.load(reader, source, RowRange.ALL, prog), pairs, prog);
  }

  /** The same for codes already in the index layout (first row number {@code q.firstRow()}). */
  public static AgainstResult against(IndexReader reader, Params p, QueryCodes q, PairSink pairs, Progress progress) {
    return against(reader, p, select(reader, p), q, pairs, progress == null ? Progress.NONE : progress);
  }

  private static AgainstResult against(IndexReader reader, Params p, Selection sel, QueryCodes q, PairSink pairs, Progress prog) {
    long started = System.nanoTime();
    if (!q.codes().layout().equals(reader.layout()))
      throw new BadInputException("rows to look up have layout " + q.codes().layout() + ", the index " + reader.layout());
    CodeBlock queries = Layers.project(q.codes(), sel.codes.layout());
    RadiusMatcher join = RadiusMatcher.build(sel.codes, p.radius());
    List<RowMatches> rows = new ArrayList<>();
    long[] totals = {0, 0}; // matches, rows with a match
    int[] current = {-1};
    List<long[]> found = new ArrayList<>(); // (distance, id) of the current row, closest SHOWN
    int[] count = {0};
    Runnable flush = () -> {
      if (current[0] < 0) return;
      found.sort((a, b) -> a[0] != b[0] ? Long.compare(a[0], b[0]) : Long.compare(a[1], b[1]));
      List<Match> ms = new ArrayList<>();
      for (long[] f : found.subList(0, Math.min(SHOWN, found.size()))) {
        int id = (int) f[1];
        Map<String, String> doc = reader.meta().document(id);
        ms.add(new Match(id, doc == null ? null : doc.get("key"), (int) f[0], doc == null ? null : doc.get("label"),
            doc == null ? null : doc.get("split")));
      }
      rows.add(new RowMatches(q.row(current[0]), count[0], List.copyOf(ms)));
      totals[1]++;
      found.clear();
      count[0] = 0;
    };
    join.forEachMatch(queries, p.threads(), (row, ord, d) -> {
      if (row != current[0]) {
        flush.run();
        current[0] = row;
      }
      count[0]++;
      totals[0]++;
      int id = sel.ids[ord];
      found.add(new long[] {d, id});
      if (found.size() > 4 * SHOWN) { // keep the closest SHOWN only
        found.sort((a, b) -> a[0] != b[0] ? Long.compare(a[0], b[0]) : Long.compare(a[1], b[1]));
        found.subList(SHOWN, found.size()).clear();
      }
      if (pairs != null) pairs.pair(row, id, d);
    }, (done, total) -> prog.update(done, total));
    flush.run();
    AgainstSummary s = new AgainstSummary(sel.ids.length, sel.codes.layout().bits(), p.radius(), queries.size(), totals[1],
        queries.size() - totals[1], totals[0], join.tables(), (System.nanoTime() - started) / 1e9);
    return new AgainstResult(s, List.copyOf(rows), q.notes());
  }

  // ------------------------------------------------------------------ selection

  /** The joined examples: ids ascending, their codes on the chosen layers. */
  private record Selection(int[] ids, CodeBlock codes) {}

  private static Selection select(IndexReader reader, Params p) {
    CodeLayout layout = reader.layout();
    int[] order = Layers.select(layout, p.layers());
    List<CodeLayout.Segment> segs = new ArrayList<>();
    for (int s : order) segs.add(layout.segments().get(s));
    CodeLayout target = p.layers().isEmpty() ? layout : new CodeLayout(segs);
    Layers.checkRadius(layout, p.layers(), p.radius());
    IdSet filter = Where.select(reader.meta(), p.where());
    int[] live = new int[reader.liveCount()];
    CodeBlock all = reader.liveCodes(live);
    int n = 0, w = all.wordsPerCode();
    long[] words = all.words();
    int[] ids = new int[live.length];
    for (int i = 0; i < live.length; i++) {
      if (filter != null && !filter.contains(live[i])) continue;
      if (n != i) System.arraycopy(words, i * w, words, n * w, w);
      ids[n++] = live[i];
    }
    CodeBlock codes = new CodeBlock(layout, n, Arrays.copyOf(words, n * w));
    return new Selection(Arrays.copyOf(ids, n), Layers.project(codes, target));
  }
}
