package io.actindex.bench;

import io.actindex.index.store.IndexReader;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.nio.file.Path;
import java.util.Arrays;

/**
 * Opens and closes one index many times and prints the median (and least) CPU time of the opening
 * thread and wall time per open: a measure that a busy machine disturbs less than JMH's wall clock
 * (GC threads are not counted; a collection runs before each timed open so none lands inside it).
 *
 * <p>Run: {@code java -Xmx6g -cp bench/target/benchmarks.jar io.actindex.bench.OpenLoop INDEX_DIR [opens=20] [label]}.
 */
public final class OpenLoop {
  private OpenLoop() {}

  public static void main(String[] args) throws Exception {
    ThreadMXBean mx = ManagementFactory.getThreadMXBean();
    Path index = Path.of(args[0]);
    int n = args.length > 1 ? Integer.parseInt(args[1]) : 20;
    String label = args.length > 2 ? args[2] : index.toString();
    for (int i = 0; i < 8; i++) IndexReader.open(index).close(); // warm-up
    long[] cpu = new long[n], wall = new long[n];
    for (int i = 0; i < n; i++) {
      System.gc();
      long c = mx.getCurrentThreadCpuTime(), w = System.nanoTime();
      IndexReader.open(index).close();
      cpu[i] = mx.getCurrentThreadCpuTime() - c;
      wall[i] = System.nanoTime() - w;
    }
    Arrays.sort(cpu);
    Arrays.sort(wall);
    System.out.printf("%s: thread CPU per open median %.1f ms (least %.1f), wall median %.1f ms (least %.1f)%n", label,
        cpu[n / 2] / 1e6, cpu[0] / 1e6, wall[n / 2] / 1e6, wall[0] / 1e6);
  }
}
