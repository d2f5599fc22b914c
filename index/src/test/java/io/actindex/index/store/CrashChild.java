package io.actindex.index.store;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.roaringbitmap.RoaringBitmap;

/**
 * Child process of {@link CrashTest}: opens the index given as first argument and
 * changes it until killed. Before each change it logs {@code BEGIN add N}, {@code BEGIN delete
 * ID,ID,...} or {@code BEGIN compact}; after the change returned (committed) it logs {@code DONE}.
 * The log is the file given as third argument, each line one unbuffered write: a killed process's
 * completed writes are all in the file. (Read from its standard output through a pipe, the test
 * once found the index two changes, an add and a delete, ahead of the lines it had read: most
 * likely lines lost at the kill, since the reading thread ended quietly on an error.)
 * The code, metadata and magnitudes of id i are a function of i alone ({@link #code}, {@link #row},
 * {@link #value}); every segment keeps 8-bit magnitudes.
 */
public final class CrashChild {
  static final CodeLayout LAYOUT = CodeLayout.parse("a:60,b:36");

  static long[] code(int id) {
    SplittableRandom rnd = new SplittableRandom(0xC0DEL * 31 + id);
    long[] c = new long[LAYOUT.words()];
    for (int j = 0; j < c.length; j++) c[j] = rnd.nextLong();
    c[c.length - 1] &= ~CodeBlock.ghostMask(LAYOUT);
    return c;
  }

  /** Magnitude of unit {@code j} of id {@code id}: 0 for an off bit, else 1 to 9. */
  static float value(int id, int j) {
    long[] c = code(id);
    return (c[j >>> 6] >>> (j & 63) & 1) == 0 ? 0f : 1 + (id * 7 + j) % 9;
  }

  static Map<String, String> row(int id) {
    Map<String, String> row = new HashMap<>();
    row.put("key", "k" + id);
    row.put("label", "c" + id % 5);
    row.put("weight", Integer.toString(id % 7));
    return row;
  }

  public static void main(String[] args) throws Exception {
    Path dir = Path.of(args[0]);
    SplittableRandom rnd = new SplittableRandom(Long.parseLong(args[1]));
    log = new java.io.FileOutputStream(args[2], true);
    RoaringBitmap live;
    try (IndexReader r = IndexReader.open(dir)) {
      live = RoaringBitmap.bitmapOf(r.liveIds().toArray());
    }
    try (IndexWriter w = IndexWriter.open(dir)) {
      while (true) {
        int op = rnd.nextInt(10);
        if (op < 7 || live.isEmpty()) {
          int n = 1 + rnd.nextInt(300);
          int first = w.maxId();
          long[] words = new long[n * LAYOUT.words()];
          List<Map<String, String>> rows = new ArrayList<>();
          for (int i = 0; i < n; i++) {
            System.arraycopy(code(first + i), 0, words, i * LAYOUT.words(), LAYOUT.words());
            rows.add(row(first + i));
          }
          float[] mags = new float[n * LAYOUT.bits()];
          for (int i = 0; i < n; i++) for (int j = 0; j < LAYOUT.bits(); j++) mags[i * LAYOUT.bits() + j] = value(first + i, j);
          say("BEGIN add " + n);
          w.add(new CodeBlock(LAYOUT, n, words), Magnitudes.quantise(mags, n, LAYOUT.bits(), 8), rows);
          live.add((long) first, (long) first + n);
        } else if (op < 9) {
          RoaringBitmap del = new RoaringBitmap();
          int[] ids = live.toArray();
          for (int i = 0; i < 1 + rnd.nextInt(40); i++) del.add(ids[rnd.nextInt(ids.length)]);
          StringBuilder sb = new StringBuilder();
          del.forEach((int id) -> sb.append(sb.isEmpty() ? "" : ",").append(id));
          say("BEGIN delete " + sb);
          w.delete(del.toArray());
          live.andNot(del);
        } else {
          say("BEGIN compact");
          w.compact();
        }
        say("DONE");
      }
    }
  }

  private static java.io.FileOutputStream log;

  private static void say(String line) throws java.io.IOException {
    log.write((line + "\n").getBytes(java.nio.charset.StandardCharsets.UTF_8));
  }
}
