package io.actindex.query;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.Randoms;
import java.io.IOException;
import java.lang.management.ManagementFactory;
import java.lang.management.MemoryMXBean;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Random;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** Metadata rows held by column: each row reads as the map of its non-empty cells in column order, and repeated values are held once. */
class MetaRowsTest {
  @TempDir Path tmp;

  @Test
  void rowsReadAsTheMapsOfTheirCells() {
    for (int t = 0; t < 30; t++) {
      long seed = Randoms.seed(t);
      Random rnd = new Random(seed);
      int cols = 1 + rnd.nextInt(6), n = rnd.nextInt(200);
      String[] names = new String[cols];
      for (int c = 0; c < cols; c++) names[c] = "f" + c;
      MetaRows rows = new MetaRows(names);
      List<Map<String, String>> want = new ArrayList<>();
      for (int i = 0; i < n; i++) {
        String[] cells = new String[cols];
        Map<String, String> map = new LinkedHashMap<>();
        for (int c = 0; c < cols; c++) {
          int k = rnd.nextInt(4);
          cells[c] = k == 0 ? (rnd.nextBoolean() ? "" : null) : k == 1 ? "v" + rnd.nextInt(3) : "u" + rnd.nextInt(100_000);
          if (cells[c] != null && !cells[c].isEmpty()) map.put(names[c], cells[c]);
        }
        rows.add(cells);
        want.add(map);
      }
      String why = Randoms.describe(seed);
      assertEquals(want, rows, why);
      assertEquals(want.hashCode(), rows.hashCode(), why);
      for (int i = 0; i < n; i++) {
        assertEquals(List.copyOf(want.get(i).entrySet()), List.copyOf(rows.get(i).entrySet()), why + " row " + i); // column order
        for (String name : names) assertEquals(want.get(i).containsKey(name), rows.get(i).containsKey(name), why + " row " + i);
        assertNull(rows.get(i).get("absent"), why);
      }
    }
  }

  @Test
  void repeatedValuesAreHeldOnceAndRowsAreReadOnly() {
    MetaRows rows = new MetaRows(new String[] {"key", "label"});
    rows.add(new String[] {"a", new String("cat")});
    rows.add(new String[] {"b", new String("cat")});
    assertSame(rows.get(0).get("label"), rows.get(1).get("label"));
    assertThrows(UnsupportedOperationException.class, () -> rows.get(0).put("label", "dog"));
    assertThrows(IndexOutOfBoundsException.class, () -> rows.get(2));
  }

  @Test
  void manyRowsHeldInLittleMemory() throws IOException {
    // 200,000 rows of a key, a label of 8 and a split of 3 (the metadata of tools/audit/commands_at_scale.py): a map per row
    // held about 400 bytes a row (the map, its table and entries, and a string per cell); by column, about 70 (the key's string,
    // a reference per cell, the arrays up to twice as long as the rows)
    int n = 200_000;
    StringBuilder csv = new StringBuilder("key,label,split\n");
    for (int i = 0; i < n; i++) csv.append('k').append(i).append(",c").append(i % 8).append(',').append(i % 10 < 8 ? "train" : "test").append('\n');
    Path f = tmp.resolve("meta.csv");
    Files.writeString(f, csv);
    csv = null;
    MemoryMXBean heap = ManagementFactory.getMemoryMXBean();
    long before = live(heap);
    List<Map<String, String>> rows = MetaCsv.read(MetaCsv.Options.of(f));
    long held = live(heap) - before;
    assertEquals(Map.of("key", "k7", "label", "c7", "split", "train"), rows.get(7));
    assertTrue(held < 120L * n, n + " rows held " + held + " bytes (" + held / n + " a row)");
  }

  /** Bytes of the heap in use after a full collection (a System.gc() with G1, the default collector, is one). */
  private static long live(MemoryMXBean heap) {
    System.gc();
    System.gc();
    return heap.getHeapMemoryUsage().getUsed();
  }
}
