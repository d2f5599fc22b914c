package io.actindex.bench;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.util.Map;
import java.util.TreeMap;

/**
 * Figures a benchmark measures once in its setup (recall, bytes per example, build time), written
 * as tab-separated lines {@code row-key, name, value} to the file named by
 * {@code -Dactindex.bench.facts} so the report can put them beside the timings. Without the
 * property they are printed only.
 */
public final class Facts {
  private Facts() {}

  /**
   * The row key: the contender and its data parameters, {@code contender|k1=v1,k2=v2} with keys
   * sorted; the report builds the same key from the JMH parameters.
   */
  public static String key(String contender, Map<String, String> params) {
    StringBuilder sb = new StringBuilder(contender).append('|');
    boolean first = true;
    for (Map.Entry<String, String> e : new TreeMap<>(params).entrySet()) {
      if (!first) sb.append(',');
      sb.append(e.getKey()).append('=').append(e.getValue());
      first = false;
    }
    return sb.toString();
  }

  public static synchronized void put(String key, String name, double value) {
    String line = key + "\t" + name + "\t" + value + "\n";
    System.out.print("# fact " + line);
    String f = System.getProperty("actindex.bench.facts");
    if (f == null || f.isBlank()) return;
    try {
      Files.writeString(Path.of(f), line, StandardCharsets.UTF_8, StandardOpenOption.CREATE, StandardOpenOption.APPEND);
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /** Reads a facts file: row key -> (name -> value); a later line wins. */
  public static Map<String, Map<String, Double>> read(Path f) throws IOException {
    Map<String, Map<String, Double>> out = new TreeMap<>();
    if (!Files.exists(f)) return out;
    for (String line : Files.readAllLines(f, StandardCharsets.UTF_8)) {
      String[] p = line.split("\t");
      if (p.length != 3) continue;
      out.computeIfAbsent(p[0], x -> new TreeMap<>()).put(p[1], Double.parseDouble(p[2]));
    }
    return out;
  }
}
