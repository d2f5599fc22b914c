package io.actindex.cluster;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.encode.CodeFiles;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import java.io.IOException;
import java.nio.file.Path;
import java.util.ArrayDeque;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.HashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.SplittableRandom;

/** Test data (planted near copies), shard writers, and the independent references: an O(n^2) join and a BFS. */
final class Fixtures {
  private Fixtures() {}

  /** {@code base} followed by {@code copies} near copies of random rows (0..maxFlips random bits flipped, some exact). */
  static CodeBlock planted(CodeBlock base, int copies, int maxFlips, long seed) {
    SplittableRandom rnd = new SplittableRandom(seed);
    int n = base.size(), w = base.wordsPerCode(), bits = base.layout().bits();
    long[] words = java.util.Arrays.copyOf(base.words(), (n + copies) * w);
    for (int i = 0; i < copies; i++) {
      int src = rnd.nextInt(n + i); // copies of copies make chains
      System.arraycopy(words, src * w, words, (n + i) * w, w);
      int flips = rnd.nextInt(maxFlips + 1);
      for (int f = 0; f < flips; f++) {
        int b = rnd.nextInt(bits);
        words[(n + i) * w + (b >>> 6)] ^= 1L << (b & 63);
      }
    }
    return new CodeBlock(base.layout(), n + copies, words);
  }

  /** Distance by reading bit by bit (independent of the word kernels under test). */
  static int distance(CodeBlock c, int a, int b) {
    int d = 0;
    for (int i = 0; i < c.layout().bits(); i++) if (c.bit(a, i) != c.bit(b, i)) d++;
    return d;
  }

  /** Every pair {@code "a,b,d"} with a < b within the radius, by comparing all pairs. */
  static Set<String> bruteForcePairs(CodeBlock c, int radius) {
    Set<String> out = new HashSet<>();
    for (int a = 0; a < c.size(); a++)
      for (int b = a + 1; b < c.size(); b++) {
        int d = distance(c, a, b);
        if (d <= radius) out.add(a + "," + b + "," + d);
      }
    return out;
  }

  /** Components of two or more rows of the pair graph, found by breadth-first search; each a sorted list of rows. */
  static Set<List<Integer>> components(int n, Set<String> pairs) {
    Map<Integer, List<Integer>> adj = new HashMap<>();
    for (String p : pairs) {
      String[] f = p.split(",");
      int a = Integer.parseInt(f[0]), b = Integer.parseInt(f[1]);
      adj.computeIfAbsent(a, k -> new ArrayList<>()).add(b);
      adj.computeIfAbsent(b, k -> new ArrayList<>()).add(a);
    }
    boolean[] seen = new boolean[n];
    Set<List<Integer>> out = new HashSet<>();
    for (int s = 0; s < n; s++) {
      if (seen[s] || !adj.containsKey(s)) continue;
      List<Integer> comp = new ArrayList<>();
      ArrayDeque<Integer> q = new ArrayDeque<>(List.of(s));
      seen[s] = true;
      while (!q.isEmpty()) {
        int u = q.poll();
        comp.add(u);
        for (int v : adj.get(u)) if (!seen[v]) {
          seen[v] = true;
          q.add(v);
        }
      }
      comp.sort(null);
      out.add(comp);
    }
    return out;
  }

  /** Rows {@code [from, to)} as one .npy shard in the given form. */
  static void writeShard(Path file, CodeBlock c, int from, int to, CodeFiles.Form form) throws IOException {
    CodeBlock part = c.slice(from, to);
    int bits = c.layout().bits();
    try (NpyWriter w = form == CodeFiles.Form.PACKED ? NpyWriter.create(file, NpyDtype.UINT8, (bits + 7) / 8)
        : NpyWriter.create(file, form == CodeFiles.Form.BOOL ? NpyDtype.BOOL : NpyDtype.UINT8, bits)) {
      w.writeBytes(form == CodeFiles.Form.PACKED ? CodeFiles.pack(part) : CodeFiles.unpack(part), part.size());
      w.commit();
    }
  }

  /** One packed row. */
  static byte[] packedRow(CodeBlock c, int row) {
    return CodeFiles.pack(c.slice(row, row + 1));
  }

  static CodeLayout layout(int bits) {
    return CodeLayout.single("code", bits);
  }
}
