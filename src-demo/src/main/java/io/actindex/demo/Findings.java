package io.actindex.demo;

import io.actindex.demo.VibrationScenario.Window;
import java.io.BufferedReader;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.HashSet;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Set;

/**
 * What the demo found against what it planted. The index's ids follow the rows of the history file
 * (the demo builds it in one go), so a planted window's id is its position in the history, and the
 * copy it was made from is found by key.
 */
final class Findings {
  /** One line of the summary: a kind of planted problem, how many were found of how many planted, and how. */
  record Line(String kind, int found, int planted, String how) {
    String render() {
      return String.format(Locale.ROOT, "  %-48s %5d / %-5d %s", kind, found, planted, how);
    }
  }

  private final List<Line> lines = new ArrayList<>();

  List<Line> lines() {
    return lines;
  }

  void add(String kind, int found, int planted, String how) {
    lines.add(new Line(kind, found, planted, how));
  }

  /**
   * From the pairs file of {@code dupes --pairs} ({@code id_a,id_b,distance}): re-sent windows found
   * at distance 0 with their original, stuck-sensor windows paired with another stuck window,
   * leaked windows paired with their training original, relabelled windows paired with theirs.
   */
  void fromPairs(List<Window> history, Path pairsCsv, int radius) throws IOException {
    Map<String, Integer> idOfKey = new HashMap<>();
    for (int i = 0; i < history.size(); i++) idOfKey.put(history.get(i).key(), i);
    Set<Long> exact = new HashSet<>(), near = new HashSet<>();
    try (BufferedReader r = Files.newBufferedReader(pairsCsv, StandardCharsets.UTF_8)) {
      String line = r.readLine(); // header
      while ((line = r.readLine()) != null) {
        String[] f = line.split(",");
        int a = Integer.parseInt(f[0]), b = Integer.parseInt(f[1]), d = Integer.parseInt(f[2]);
        long key = pair(a, b);
        near.add(key);
        if (d == 0) exact.add(key);
      }
    }
    int[] found = new int[4], planted = new int[4];
    String[] kinds = {VibrationScenario.RESENT, VibrationScenario.STUCK, VibrationScenario.LEAKED, VibrationScenario.RELABELLED};
    List<Integer> stuck = new ArrayList<>();
    for (int i = 0; i < history.size(); i++) if (history.get(i).planted().equals(VibrationScenario.STUCK)) stuck.add(i);
    for (int i = 0; i < history.size(); i++) {
      Window w = history.get(i);
      int k = List.of(kinds).indexOf(w.planted());
      if (k < 0) continue;
      planted[k]++;
      boolean hit;
      if (k == 1) {
        hit = false;
        for (int other : stuck) hit |= other != i && near.contains(pair(i, other));
      } else {
        long p = pair(i, idOfKey.get(w.copyOf()));
        hit = k == 0 ? exact.contains(p) : near.contains(p);
      }
      if (hit) found[k]++;
    }
    add("re-sent by the flaky logger", found[0], planted[0], "pair at distance 0 with the original");
    add("stuck sensor", found[1], planted[1], "paired with another stuck window within " + radius);
    add("copied across the train/test split", found[2], planted[2], "paired with its training original (a leaking group)");
    add("labelled twice, differently", found[3], planted[3], "paired with its original (a conflicting group)");
  }

  private static long pair(int a, int b) {
    return ((long) Math.min(a, b) << 32) | Math.max(a, b);
  }
}
