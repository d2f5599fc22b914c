package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.edge.EdgeBundle;
import io.actindex.query.EdgeCSource;
import io.actindex.query.EdgeExport;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.TimeUnit;

/**
 * The generated C scorer's speed (JMH cannot time C): for each size, writes the C source of a
 * bundle of that many unique uniform 256-bit codes (the {@link EdgeBench} data: k = 1, threshold
 * 4), compiles it with {@code gcc -O2 -march=native} and a driver that times {@code axe_score} and
 * {@code axe_is_out} over the 1,024 {@code in} and {@code ood} queries with {@code
 * clock_gettime(CLOCK_MONOTONIC)}, 5 passes, and prints the median microseconds per query.
 *
 * <p>{@code java -cp bench/target/benchmarks.jar io.actindex.bench.EdgeCTiming WORKDIR 10000 100000}
 */
public final class EdgeCTiming {
  private EdgeCTiming() {}

  static final String DRIVER = """
      #define _POSIX_C_SOURCE 199309L
      #include <stdio.h>
      #include <stdlib.h>
      #include <time.h>
      #include "actindex_edge.h"
      static double now(void) { struct timespec t; clock_gettime(CLOCK_MONOTONIC, &t); return t.tv_sec * 1e6 + t.tv_nsec / 1e3; }
      static int cmp(const void *a, const void *b) { double x = *(const double *) a, y = *(const double *) b; return (x > y) - (x < y); }
      int main(int argc, char **argv) {
        FILE *f = fopen(argv[1], "r");
        int n = 0;
        static uint64_t q[1024][AXE_WORDS];
        while (n < 1024) {
          int ok = 1;
          for (int w = 0; w < AXE_WORDS && ok; w++) { unsigned long long v; ok = fscanf(f, "%llx", &v) == 1; q[n][w] = v; }
          if (!ok) break;
          n++;
        }
        fclose(f);
        volatile double sink = 0;
        for (int mode = 0; mode < 2; mode++) {
          double us[5];
          for (int pass = 0; pass < 5; pass++) {
            double t0 = now();
            for (int i = 0; i < n; i++) sink += mode == 0 ? axe_score(q[i]) : axe_is_out(q[i]);
            us[pass] = (now() - t0) / n;
          }
          qsort(us, 5, sizeof us[0], cmp);
          printf("%s %.3f\\n", mode == 0 ? "score" : "decision", us[2]);
        }
        return sink < 0;
      }
      """;

  public static void main(String[] args) throws Exception {
    Path work = Path.of(args[0]);
    Files.createDirectories(work);
    CodeBlock all = BenchData.codes("uniform", 1_000_000, 256);
    System.out.println("| unique codes | queries | C score µs/query | C decision-only µs/query |");
    System.out.println("|---:|---|---:|---:|");
    for (int a = 1; a < args.length; a++) {
      int unique = Integer.parseInt(args[a]);
      CodeBlock codes = all.slice(0, unique);
      EdgeBundle b = EdgeExport.bundle(codes, new EdgeBundle.Calibration(1, EdgeBundle.Statistic.KTH, List.of(), 0.8, 4, new double[] {0, 1, 2, 3, 4}), null);
      Path dir = work.resolve("c" + unique);
      EdgeCSource.write(b, dir);
      Files.writeString(dir.resolve("timing.c"), DRIVER);
      Path exe = dir.resolve("timing");
      run(new ProcessBuilder("gcc", "-std=c99", "-O2", "-march=native", "-o", exe.toString(), dir.resolve("timing.c").toString(),
          dir.resolve(EdgeCSource.SOURCE).toString()));
      for (String kind : new String[] {"in", "ood"}) {
        long[][] pool = kind.equals("in") ? new BenchData.Queries(BenchData.nearDuplicates(codes, BenchData.QUERIES, 4, BenchData.SEED ^ 0xED6EL), null).codeArrays()
            : BenchData.queries("uniform", "ood", 1_000_000, 256).codeArrays();
        List<String> lines = new ArrayList<>();
        for (long[] q : pool) {
          StringBuilder s = new StringBuilder();
          for (long w : q) s.append(Long.toHexString(w)).append(' ');
          lines.add(s.toString());
        }
        Path qf = dir.resolve("queries-" + kind + ".txt");
        Files.write(qf, lines);
        String out = run(new ProcessBuilder(exe.toString(), qf.toString()));
        String[] l = out.trim().split("\n");
        System.out.println("| " + unique + " | " + kind + " | " + l[0].split(" ")[1] + " | " + l[1].split(" ")[1] + " |");
      }
    }
  }

  private static String run(ProcessBuilder pb) throws Exception {
    Process p = pb.redirectErrorStream(true).start();
    String out = new String(p.getInputStream().readAllBytes(), StandardCharsets.UTF_8);
    if (!p.waitFor(1800, TimeUnit.SECONDS) || p.exitValue() != 0) throw new IllegalStateException(pb.command() + " failed:\n" + out);
    return out;
  }
}
