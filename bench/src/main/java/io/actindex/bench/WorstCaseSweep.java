package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Hits;
import io.actindex.core.ScanSearcher;
import io.actindex.index.mih.Searchers;
import io.actindex.index.store.IndexReader;
import java.lang.management.ManagementFactory;
import java.lang.reflect.Field;
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
 * checks that both answer the same ids and distances, and counts which path the planner took. With
 * {@code detail=N}, each row is followed by the planner's time over the scan's summed per path (the
 * head, the scan, the tables, the partition: where the excess goes) and its N worst queries (planner
 * and scan µs, path, the k-th distance).
 *
 * <p>Run: {@code java -cp bench/target/benchmarks.jar -Dactindex.bench.data=DIR
 * io.actindex.bench.WorstCaseSweep [data=dense,relu] [n=100000] [bits=64,128,256,512,1024]
 * [queries=in,ood] [k=1,10,100] [mask=none,first,second] [rounds=3] [count=512] [detail=0] [via=searcher] [loops=1]}; {@code via=reader}
 * runs the planner through a one-segment on-disk index ({@link IndexReader#search}, the store
 * {@link RealUseBench} caches) instead of the searcher alone. {@code loops=L} times each query as
 * the mean of L calls in a row (for queries of a few µs, where one call's time carries the clock's
 * cost and a cold start).
 */
public final class WorstCaseSweep {
  private WorstCaseSweep() {}

  public static void main(String[] args) throws Exception {
    String[] data = arg(args, "data", "dense,relu").split(","), kinds = arg(args, "queries", "in,ood").split(","),
        masks = arg(args, "mask", "none,first,second").split(",");
    String via = arg(args, "via", "searcher");
    int n = Integer.parseInt(arg(args, "n", "100000")), rounds = Integer.parseInt(arg(args, "rounds", "3")),
        count = Integer.parseInt(arg(args, "count", "512")), loops = Integer.parseInt(arg(args, "loops", "1")), detail = Integer.parseInt(arg(args, "detail", "0"));
    int[] widths = Arrays.stream(arg(args, "bits", "64,128,256,512,1024").split(",")).mapToInt(Integer::parseInt).toArray();
    int[] ks = Arrays.stream(arg(args, "k", "1,10,100").split(",")).mapToInt(Integer::parseInt).toArray();
    System.out.println("| data | bits | queries | mask | k | scan µs | masked scan µs | planner µs | / scan | / masked scan | worst query | paths h/s/t/p | load |");
    System.out.println("|---|---:|---|---|---:|---:|---:|---:|---:|---:|---:|---|---:|");
    for (String d : data)
      for (int bits : widths) {
        CodeBlock codes = BenchData.codes(d, n, bits);
        IndexReader reader = via.equals("reader") ? IndexReader.open(RealUseBench.store(d, codes, 1, null)) : null;
        CodeSearcher searcher = reader == null ? Searchers.build(codes) : segmentSearcher(reader);
        CodeSearcher planner = reader == null ? searcher : through(reader);
        ScanSearcher scan = new ScanSearcher(codes);
        Method work = searcher.getClass().getDeclaredMethod("lastQueryWork");
        work.setAccessible(true);
        for (String kind : kinds) {
          long[][] qs = querySet(d, kind, n, bits, count);
          for (int k : ks) {
            double[] plain = bestTimes(scan, qs, k, rounds);
            for (String m : masks) {
              long[] mask = layerMask(codes.layout(), m);
              double[] scanT = new double[qs.length], planT = new double[qs.length];
              int[] paths = new int[6], pathOf = new int[qs.length], kth = new int[qs.length];
              bestPair(scan, planner, searcher, mask, qs, k, rounds, loops, scanT, planT, paths, pathOf, kth, work,
                  d + " " + bits + " " + kind + " " + m + " " + k);
              double s = sum(scanT), p = sum(planT), base = sum(plain), worst = 0;
              for (int i = 0; i < qs.length; i++) worst = Math.max(worst, planT[i] / scanT[i]);
              System.out.printf(Locale.ROOT, "| %s | %d | %s | %s | %d | %.1f | %s | %.1f | %.2f× | %s | %.1f× | %d/%d/%d/%d | %.1f |%n",
                  d, bits, kind, m, k, base / qs.length, mask == null ? "–" : String.format(Locale.ROOT, "%.1f", s / qs.length),
                  p / qs.length, p / base, mask == null ? "–" : String.format(Locale.ROOT, "%.2f×", p / s), worst,
                  paths[4], paths[1] + paths[5], paths[2], paths[3], ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage());
              if (detail > 0) details(detail, scanT, planT, pathOf, kth);
            }
          }
        }
        if (reader != null) reader.close();
      }
  }

  /** The first {@code count} queries of a pool ({@link BenchData#queries}): a row's fixed query set. */
  static long[][] querySet(String data, String kind, int n, int bits, int count) {
    long[][] pool = BenchData.queries(data, kind, n, bits).codeArrays();
    return Arrays.copyOf(pool, Math.min(count, pool.length));
  }

  /** The mask of a row: {@code none} (null), {@code first} or {@code second} layer. */
  static long[] layerMask(CodeLayout layout, String name) {
    return switch (name) {
      case "none" -> null;
      case "first" -> layout.mask(0);
      case "second" -> layout.mask(1);
      default -> throw new IllegalArgumentException("mask must be none, first or second, got " + name);
    };
  }

  /** The searcher of the reader's one segment (for its work counters). */
  private static CodeSearcher segmentSearcher(IndexReader reader) throws ReflectiveOperationException {
    Field f = IndexReader.class.getDeclaredField("segments");
    f.setAccessible(true);
    Object segment = ((java.util.List<?>) f.get(reader)).getFirst();
    Method m = segment.getClass().getMethod("searcher");
    m.setAccessible(true);
    return (CodeSearcher) m.invoke(segment);
  }

  /** k-NN through the on-disk index ({@link IndexReader#search}), no filter. */
  private static CodeSearcher through(IndexReader reader) {
    return new CodeSearcher() {
      @Override
      public CodeLayout layout() {
        return reader.layout();
      }

      @Override
      public int size() {
        return reader.liveCount();
      }

      @Override
      public Hits knn(long[] query, int k, java.util.function.IntPredicate accept, long[] mask) {
        return reader.search(query, k, null, mask);
      }

      @Override
      public Hits radius(long[] query, int radius, java.util.function.IntPredicate accept, long[] mask) {
        return reader.searchRadius(query, radius, null, mask);
      }
    };
  }

  private static final String[] PATH_NAMES = {"?", "scan", "tables", "partition", "head", "tables then scan"};

  /** Per path: queries, planner and scan µs summed, their ratio; then the worst queries. */
  private static void details(int worst, double[] scanT, double[] planT, int[] pathOf, int[] kth) {
    StringBuilder b = new StringBuilder("    by path:");
    for (int path = 1; path < PATH_NAMES.length; path++) {
      int c = 0;
      double p = 0, s = 0;
      for (int i = 0; i < pathOf.length; i++)
        if (pathOf[i] == path) {
          c++;
          p += planT[i];
          s += scanT[i];
        }
      if (c > 0) b.append(String.format(Locale.ROOT, " %s %d q, %.0f/%.0f µs = %.2f×, excess %+.0f µs;", PATH_NAMES[path], c, p, s, p / s, p - s));
    }
    System.out.println(b);
    Integer[] order = new Integer[planT.length];
    for (int i = 0; i < order.length; i++) order[i] = i;
    Arrays.sort(order, (x, y) -> Double.compare(planT[y] - scanT[y], planT[x] - scanT[x]));
    for (int j = 0; j < Math.min(worst, order.length); j++) {
      int i = order[j];
      System.out.printf(Locale.ROOT, "    query %d: planner %.1f µs, scan %.1f µs, %s, k-th distance %d%n", i, planT[i], scanT[i],
          PATH_NAMES[pathOf[i]], kth[i]);
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
  private static void bestPair(ScanSearcher scan, CodeSearcher planner, CodeSearcher searcher, long[] mask, long[][] qs, int k, int rounds,
      int loops, double[] scanT, double[] planT, int[] paths, int[] pathOf, int[] kth, Method work, String what) throws Exception {
    Arrays.fill(scanT, Double.MAX_VALUE);
    Arrays.fill(planT, Double.MAX_VALUE);
    for (int r = 0; r < rounds + 1; r++)
      for (int i = 0; i < qs.length; i++) {
        boolean scanFirst = ((r + i) & 1) == 0;
        double a = 0, b;
        if (scanFirst) a = time(scan, qs[i], k, mask, loops);
        b = time(planner, qs[i], k, mask, loops);
        Hits h = r == 0 ? planner.knn(qs[i], k, null, mask) : null;
        if (!scanFirst) a = time(scan, qs[i], k, mask, loops);
        if (r == 0) {
          long[] w = (long[]) work.invoke(searcher);
          pathOf[i] = w[3] == 1 && w[0] > 0 ? 5 : (int) w[3]; // 5: the scan after the tables gave up
          paths[pathOf[i]]++;
          Hits e = scan.knn(qs[i], k, null, mask);
          kth[i] = e.size() == 0 ? -1 : e.dist(e.size() - 1);
          if (!h.equals(e))
            throw new AssertionError("planner and scan differ: " + what + " query " + i);
          continue;
        }
        scanT[i] = Math.min(scanT[i], a);
        planT[i] = Math.min(planT[i], b);
      }
  }

  /** µs per call of {@code loops} calls in a row (sub-µs queries: the clock's own cost and a cold first call averaged out). */
  private static double time(CodeSearcher s, long[] q, int k, long[] mask, int loops) {
    long t0 = System.nanoTime();
    for (int l = 0; l < loops; l++) s.knn(q, k, null, mask);
    return (System.nanoTime() - t0) / 1e3 / loops;
  }

  private static double sum(double[] a) {
    double s = 0;
    for (double x : a) s += x;
    return s;
  }

  static String arg(String[] args, String name, String def) {
    for (String a : args) if (a.startsWith(name + "=")) return a.substring(name.length() + 1);
    return def;
  }
}
