package io.actindex.query;

import static org.junit.jupiter.api.Assumptions.assumeTrue;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.concurrent.TimeUnit;

/**
 * Compiles the C source of an edge bundle with the system's gcc and a small driver, and runs it:
 * each input line is {@code c W0 W1 ...} (a code as hex words) or {@code x V0 V1 ...} (a raw input,
 * doubles as hex floats); each output line is {@code kth score is_out p_value W0 W1 ...} (scores as
 * C's %a, the code's words in hex), for a raw input through a bundle with a range guard followed by
 * {@code r=RANGE} (axe_encode_range's ratio as %a; the driver exits 5 when its code differs from
 * axe_encode's), or {@code overflow} when axe_encode refuses the input. Tests skip, saying why, when gcc is absent.
 */
final class CEdge {
  private CEdge() {}

  static final String DRIVER = """
      #include <stdio.h>
      #include <stdlib.h>
      #include "actindex_edge.h"
      int main(void) {
        char kind;
        uint64_t code[AXE_WORDS];
        while (scanf(" %c", &kind) == 1) {
          double range = 0;
          if (kind == 'c') {
            for (int w = 0; w < AXE_WORDS; w++) {
              unsigned long long v;
              if (scanf("%llx", &v) != 1) return 3;
              code[w] = v;
            }
          } else {
      #if AXE_HAS_MODEL
            double x[AXE_INPUTS];
            for (int j = 0; j < AXE_INPUTS; j++) {
              char buf[64];
              if (scanf("%63s", buf) != 1) return 3;
              x[j] = strtod(buf, NULL);
            }
            if (axe_encode(x, code)) { printf("overflow\\n"); continue; }
      #if AXE_HAS_RANGE
            uint64_t again[AXE_WORDS];
            if (axe_encode_range(x, again, &range)) return 5;
            for (int w = 0; w < AXE_WORDS; w++) if (again[w] != code[w]) return 5;
      #endif
      #else
            return 4;
      #endif
          }
          double s = axe_score(code);
          printf("%d %a %d %a", axe_kth_distance(code), s, axe_is_out(code), axe_p_value(s));
          for (int w = 0; w < AXE_WORDS; w++) printf(" %llx", (unsigned long long) code[w]);
          if (AXE_HAS_RANGE && kind != 'c') printf(" r=%a", range);
          printf("\\n");
        }
        return 0;
      }
      """;

  /** Compiles {@code dir}'s actindex_edge.c with the driver; skips the test when there is no gcc. */
  static Path compile(Path dir) throws IOException, InterruptedException {
    assumeTrue(gcc(), "gcc not found on PATH: the compiled C source check is skipped (install gcc to run it)");
    Files.writeString(dir.resolve("driver.c"), DRIVER);
    Path exe = dir.resolve("edge-driver");
    List<String> cmd = new java.util.ArrayList<>(List.of("gcc", "-std=c99", "-O2", "-ffp-contract=off", "-Wall", "-Wextra", "-pedantic", "-Werror",
        "-o", exe.toString(), dir.resolve("driver.c").toString(), dir.resolve(EdgeCSource.SOURCE).toString()));
    // the range ratio takes sqrt (libm); a source without a range guard links without it, as before the guard
    if (Files.readString(dir.resolve(EdgeCSource.HEADER)).contains("#define AXE_HAS_RANGE 1")) cmd.add("-lm");
    Process p = new ProcessBuilder(cmd).redirectErrorStream(true).start();
    String log = new String(p.getInputStream().readAllBytes(), StandardCharsets.UTF_8);
    if (!p.waitFor(300, TimeUnit.SECONDS) || p.exitValue() != 0) throw new AssertionError("gcc failed:\n" + log);
    return exe;
  }

  /**
   * The same driver compiled as C++ (g++) against the source compiled as C (gcc): links only when
   * the header declares its functions {@code extern "C"}. Skips the test when there is no g++.
   */
  static Path compileCpp(Path dir) throws IOException, InterruptedException {
    assumeTrue(gcc() && works("g++", "--version"), "gcc or g++ not found on PATH: the C++ check is skipped");
    Files.writeString(dir.resolve("driver.c"), DRIVER);
    Path obj = dir.resolve("edge.o"), exe = dir.resolve("edge-driver-cpp");
    String header = Files.readString(dir.resolve(EdgeCSource.HEADER));
    List<String> c = List.of("gcc", "-std=c99", "-O2", "-ffp-contract=off", "-Wall", "-Wextra", "-pedantic", "-Werror", "-c", "-o", obj.toString(),
        dir.resolve(EdgeCSource.SOURCE).toString());
    List<String> cpp = new java.util.ArrayList<>(List.of("g++", "-std=c++11", "-O2", "-ffp-contract=off", "-Wall", "-Wextra", "-Werror", "-o",
        exe.toString(), "-x", "c++", dir.resolve("driver.c").toString(), "-x", "none", obj.toString()));
    if (header.contains("#define AXE_HAS_RANGE 1")) cpp.add("-lm");
    for (List<String> cmd : List.of(c, cpp)) {
      Process p = new ProcessBuilder(cmd).redirectErrorStream(true).start();
      String log = new String(p.getInputStream().readAllBytes(), StandardCharsets.UTF_8);
      if (!p.waitFor(300, TimeUnit.SECONDS) || p.exitValue() != 0) throw new AssertionError(cmd.get(0) + " failed:\n" + log);
    }
    return exe;
  }

  static List<String> run(Path exe, List<String> lines) throws IOException, InterruptedException {
    Path in = Files.createTempFile(exe.getParent(), "in", ".txt");
    Files.write(in, lines);
    Process p = new ProcessBuilder(exe.toString()).redirectInput(in.toFile()).start();
    String out = new String(p.getInputStream().readAllBytes(), StandardCharsets.UTF_8);
    if (!p.waitFor(300, TimeUnit.SECONDS) || p.exitValue() != 0) throw new AssertionError("driver exited " + p.exitValue());
    return out.lines().toList();
  }

  /** The range ratio a driver line ends with ({@code r=...}, C's %a, or inf). */
  static double range(String line) {
    String r = line.substring(line.lastIndexOf(" r=") + 3);
    return r.equals("inf") ? Double.POSITIVE_INFINITY : Double.parseDouble(r);
  }

  static String codeLine(long[] code) {
    StringBuilder s = new StringBuilder("c");
    for (long w : code) s.append(' ').append(Long.toHexString(w));
    return s.toString();
  }

  static String inputLine(double[] x) {
    StringBuilder s = new StringBuilder("x");
    for (double v : x) s.append(' ').append(Double.toHexString(v));
    return s.toString();
  }

  private static boolean gcc() {
    return works("gcc", "--version");
  }

  private static boolean works(String... cmd) {
    try {
      Process p = new ProcessBuilder(cmd).redirectErrorStream(true).start();
      p.getInputStream().readAllBytes();
      return p.waitFor(60, TimeUnit.SECONDS) && p.exitValue() == 0;
    } catch (IOException e) {
      return false;
    } catch (InterruptedException e) {
      Thread.currentThread().interrupt();
      throw new UncheckedIOException(new IOException(e));
    }
  }
}
