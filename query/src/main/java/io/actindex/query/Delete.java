package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.index.meta.MetaStore;
import io.actindex.index.meta.Where;
import io.actindex.index.store.IndexInfo;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.charset.CharacterCodingException;
import java.nio.charset.CodingErrorAction;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import java.util.Objects;
import java.util.Set;
import org.roaringbitmap.RoaringBitmap;

/**
 * Deletes examples by key or by metadata filter, as one commit of tombstones (their ids are never
 * reused). The merge policy then rewrites, each in a commit of its own, a segment left with too
 * many deleted codes without them ({@code MergePolicy.maxDeletedShare}); {@link Compact} drops
 * every deleted code. A keys file is read and every key resolved before
 * anything changes: a key that names no live example (deleted already, or never added: the index keeps
 * no keys of deleted examples, so it cannot tell which) refuses the whole delete, so a typo never
 * deletes half a list; with {@code skipMissing} such keys are skipped and reported in
 * {@link Result#notLive}, so that rerunning a list, or one that grows, deletes what is still live.
 */
public final class Delete {
  private Delete() {}

  /** Longest line of a keys file (bytes); longer lines are refused. */
  static final int MAX_KEY_BYTES = 64 * 1024;

  /**
   * Exactly one of {@code keysFile} (one key per line, UTF-8, a byte order mark and blank lines
   * skipped) and {@code where}; {@code skipMissing} (keys file only) skips keys of no live example
   * instead of refusing the delete.
   */
  public record Params(Path dir, Path keysFile, String where, boolean skipMissing) {
    public Params {
      Objects.requireNonNull(dir, "dir");
      if ((keysFile == null) == (where == null))
        throw new BadInputException("give exactly one of `keysFile` and `where`");
      if (skipMissing && keysFile == null) throw new BadParameterException("skipMissing", " needs `keysFile` (it skips the keys that name no live example)");
    }

    public Params(Path dir, Path keysFile, String where) {
      this(dir, keysFile, where, false);
    }
  }

  /**
   * @param matched live examples the keys or the filter named
   * @param deleted of those, how many this call deleted (all of them: deleted ones are not live)
   * @param live live examples after the delete
   * @param warnings problems that did not undo the commit
   * @param notLive the keys file's keys that named no live example and were skipped, as
   *     {@code line N: 'KEY'} in file order (empty for a filter)
   * @param rewrittenSegments segments the merges after the delete rewrote (0 when none ran)
   * @param droppedCodes deleted codes those rewrites removed from the segment files
   */
  public record Result(int matched, int deleted, int live, List<String> warnings, List<String> notLive,
      int rewrittenSegments, long droppedCodes) {
    public Result {
      warnings = List.copyOf(warnings);
      notLive = List.copyOf(notLive);
    }
  }

  public static Result run(Params p) {
    int[] ids;
    List<String> notLive = new ArrayList<>(), csvRows = new ArrayList<>();
    List<IndexInfo.SegmentInfo> before;
    try (IndexReader r = IndexReader.open(p.dir())) {
      ids = p.keysFile() != null ? byKeys(r.meta(), p.keysFile(), notLive, csvRows) : Where.select(r.meta(), p.where()).toArray();
      before = r.info().segments();
    }
    if (!notLive.isEmpty() && !p.skipMissing()) {
      throw new BadInputException("keys file " + p.keysFile() + " " + notLive.getFirst() + " is not a live example of the index "
          + "(never added, or deleted already)" + (notLive.size() > 1 ? ", and " + (notLive.size() - 1) + " more key(s) are not" : "")
          + "; nothing deleted (`skipMissing` deletes the others and names these)"
          + (csvRows.isEmpty() ? "" : "; " + csvRows.size() + " of these lines are CSV rows whose first cell is a live example's key ("
              + csvRows.getFirst() + "): the keys file is read one whole line per key, not as a CSV file: list the keys alone, one per line"));
    }
    try (IndexWriter w = IndexWriter.open(p.dir())) {
      int deleted = w.delete(ids);
      List<String> warnings = w.takeWarnings();
      try (IndexReader r = IndexReader.open(p.dir())) {
        List<IndexInfo.SegmentInfo> after = r.info().segments();
        Set<Integer> kept = new HashSet<>();
        for (IndexInfo.SegmentInfo s : after) kept.add(s.segmentId());
        return new Result(ids.length, deleted, r.liveCount(), warnings, notLive,
            (int) before.stream().filter(s -> !kept.contains(s.segmentId())).count(), stored(before) - stored(after));
      }
    }
  }

  private static long stored(List<IndexInfo.SegmentInfo> segments) {
    return segments.stream().mapToLong(IndexInfo.SegmentInfo::count).sum();
  }

  /**
   * The ids of the keys listed in {@code file} that name live examples, ascending, each once; each
   * other key goes to {@code notLive} as {@code line N: 'KEY'}, and also to {@code csvRows} when the
   * text before its first comma is a live key (a metadata CSV given as the keys file). A line is
   * matched as a key of the metadata CSV is read, without the whitespace around it ({@link MetaStore#idOfKey}).
   */
  static int[] byKeys(MetaStore meta, Path file, List<String> notLive, List<String> csvRows) {
    byte[] bytes;
    try {
      bytes = Files.readAllBytes(file);
    } catch (java.nio.file.NoSuchFileException e) {
      throw new BadInputException("keys file " + file + " does not exist", e);
    } catch (IOException e) {
      throw new BadInputException("keys file " + file + " cannot be read: " + e.getMessage(), e);
    }
    String text;
    try {
      text = StandardCharsets.UTF_8.newDecoder().onMalformedInput(CodingErrorAction.REPORT)
          .onUnmappableCharacter(CodingErrorAction.REPORT).decode(ByteBuffer.wrap(bytes)).toString();
    } catch (CharacterCodingException e) {
      throw new BadInputException("keys file " + file + " is not UTF-8 text");
    }
    if (text.startsWith("\uFEFF")) text = text.substring(1); // a byte order mark, as the metadata CSV allows
    RoaringBitmap ids = new RoaringBitmap();
    String[] lines = text.split("\r?\n", -1);
    for (int i = 0; i < lines.length; i++) {
      String key = lines[i];
      if (key.isBlank()) continue;
      if (key.length() > MAX_KEY_BYTES)
        throw new BadInputException("keys file " + file + " line " + (i + 1) + ": longer than " + MAX_KEY_BYTES + " characters");
      int id = meta.idOfKey(key);
      if (id >= 0) ids.add(id);
      else {
        notLive.add("line " + (i + 1) + ": '" + Snippet.of(key) + "'");
        int comma = key.indexOf(',');
        if (comma > 0 && meta.idOfKey(key.substring(0, comma)) >= 0) csvRows.add(notLive.getLast());
      }
    }
    return ids.toArray();
  }
}
