package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hits;
import io.actindex.core.ScanSearcher;
import io.actindex.index.mih.Searchers;
import java.lang.management.ManagementFactory;
import java.lang.reflect.Method;
import java.util.Arrays;
import java.util.Locale;

/**
 * The planner against its own plain scan, paired per query (issue 9, "never above 1.1x the scan on
 * any query set"): for every data set, width, query kind, layer mask and k, each query runs through
 * the scan and through the planner ({@link Searchers#build}) in turn, alternating which goes first,
 * {@code rounds} times; a query's time is its best round. A row's ratio is the planner's summed
 * per-query times over the scan's (the masked scan for a masked row, and the unmasked one beside
 * it): both measured in the same minutes on the same queries, so a busy machine shifts both. Also
 * checks that both answer the same ids and distances, and counts which path the planner took.
 *
 * <p>Run: {@code java -cp bench/target/benchmarks.jar -Dactindex.bench.data=DIR
 * io.actindex.bench.WorstCaseSweep [data=dense,relu] [n=100000] [bits=64,128,256,512,1024]
 * [queries=in,ood] [k=1,10,100] [mask=none,first,second] [rounds=3] [count=512]}.
 */
public final class WorstCaseSweep {
  private WorstCaseSweep() {}

  public static void main(String[] args) throws Exception {
    String[] data = arg(args, "data", "dense,relu").split(","), kinds = arg(args, "queries", "in,ood").split(","),
        masks = arg(args, "mask", "none,first,second").split(",");
    int n = Integer.parseInt(arg(args, "n", "100000")), rounds = Integer.parseInt(arg(args, "rounds", "3")),
        count = Integer.parseInt(arg(args, "count", "512"));
    int[] widths = Arrays.stream(arg(args, "bits", "64,128,256,512,1024").split(",")).mapToInt(Integer::parseInt).toArray();
    int[] ks = Arrays.stream(arg(args, "k", "1,10,100").split(",")).mapToInt(Integer::parseInt).toArray();
    System.out.println("| data | bits | queries | mask | k | scan µs | masked scan µs | planner µs | / scan | / masked scan | worst query | paths s/t/p | load |");
    System.out.println("|---|---:|---|---|---:|---:|---:|---:|---:|---:|---:|---|---:|");
    for (String d : data)
      for (int bits : widths) {
        CodeBlock codes = BenchData.codes(d, n, bits);
        CodeSearcher planner = Searchers.build(codes);
        ScanSearcher scan = new ScanSearcher(codes);
        Method work = planner.getClass().getDeclaredMethod("lastQueryWork");
        work.setAccessible(true);
        for (String kind : kinds) {
          long[][] pool = BenchData.queries(d, kind, n, bits).codeArrays();
          long[][] qs = Arrays.copyOf(pool, Math.min(count, pool.length));
          for (int k : ks) {
            double[] plain = bestTimes(scan, qs, k, rounds);
            for (String m : masks) {
              long[] mask = switch (m) {
                case "none" -> null;
                case "first" -> codes.layout().mask(0);
                case "second" -> codes.layout().mask(1);
                default -> throw new IllegalArgumentException("mask must be none, first or second, got " + m);
              };
              double[] scanT = new double[qs.length], planT = new double[qs.length];
              int[] paths = new int[4];
              bestPair(scan, planner, mask, qs, k, rounds, scanT, planT, paths, work, d + " " + bits + " " + kind + " " + m + " " + k);
              double s = sum(scanT), p = sum(planT), base = sum(plain), worst = 0;
              for (int i = 0; i < qs.length; i++) worst = Math.max(worst, planT[i] / scanT[i]);
              System.out.printf(Locale.ROOT, "| %s | %d | %s | %s | %d | %.0f | %s | %.0f | %.2f× | %s | %.1f× | %d/%d/%d | %.1f |%n",
                  d, bits, kind, m, k, base / qs.length, mask == null ? "–" : String.format(Locale.ROOT, "%.0f", s / qs.length),
                  p / qs.length, p / base, mask == null ? "–" : String.format(Locale.ROOT, "%.2f×", p / s), worst,
                  paths[1], paths[2], paths[3], ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage());
            }
          }
        }
      }
  }

  /** Best-of-rounds times (µs) of one searcher alone, unmasked. */
  private static double[] bestTimes(CodeSearcher s, long[][] qs, int k, int rounds) {
    double[] t = new double[qs.length];
    Arrays.fill(t, Double.MAX_VALUE);
    for (int r = 0; r < rounds + 1; r++) // round 0 warms up
      for (int i = 0; i < qs.length; i++) {
        long t0 = System.nanoTime();
        s.knn(qs[i], k, null, null);
        double us = (System.nanoTime() - t0) / 1e3;
        if (r > 0) t[i] = Math.min(t[i], us);
      }
    return t;
  }

  /** Best-of-rounds times of the scan and the planner, alternating; checks equal answers and counts paths. */
  private static void bestPair(ScanSearcher scan, CodeSearcher planner, long[] mask, long[][] qs, int k, int rounds,
      double[] scanT, double[] planT, int[] paths, Method work, String what) throws Exception {
    Arrays.fill(scanT, Double.MAX_VALUE);
    Arrays.fill(planT, Double.MAX_VALUE);
    for (int r = 0; r < rounds + 1; r++)
      for (int i = 0; i < qs.length; i++) {
        boolean scanFirst = ((r + i) & 1) == 0;
        double a = 0, b;
        if (scanFirst) a = time(scan, qs[i], k, mask);
        long t0 = System.nanoTime();
        Hits h = planner.knn(qs[i], k, null, mask);
        b = (System.nanoTime() - t0) / 1e3;
        if (!scanFirst) a = time(scan, qs[i], k, mask);
        if (r == 0) {
          paths[(int) ((long[]) work.invoke(planner))[3]]++;
          Hits e = scan.knn(qs[i], k, null, mask);
          if (!h.equals(e))
            throw new AssertionError("planner and scan differ: " + what + " query " + i);
          continue;
        }
        scanT[i] = Math.min(scanT[i], a);
        planT[i] = Math.min(planT[i], b);
      }
  }

  private static double time(CodeSearcher s, long[] q, int k, long[] mask) {
    long t0 = System.nanoTime();
    s.knn(q, k, null, mask);
    return (System.nanoTime() - t0) / 1e3;
  }

  private static double sum(double[] a) {
    double s = 0;
    for (double x : a) s += x;
    return s;
  }

  private static String arg(String[] args, String name, String def) {
    for (String a : args) if (a.startsWith(name + "=")) return a.substring(name.length() + 1);
    return def;
  }
}
