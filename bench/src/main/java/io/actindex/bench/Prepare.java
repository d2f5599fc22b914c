package io.actindex.bench;

import java.io.IOException;

/**
 * Fills the bench data cache ahead of a run, so the benchmarks' setup only loads files: for each
 * {@code n:bits} argument, the relu codes and activations, the uniform codes, the exact cosine
 * truth of both query kinds and the Lucene HNSW index (the slow part: tens of minutes at 1M);
 * for each {@code npy:DATA:N:BITS} argument only the codes of data set DATA as a {@code .npy} of bool.
 * {@code --no-hnsw-build} skips HNSW indexes that are not cached yet.
 */
public final class Prepare {
  private Prepare() {}

  public static void main(String[] args) throws IOException {
    if (args.length == 0) {
      System.err.println("usage: Prepare [--no-hnsw-build] N:BITS|npy:DATA:N:BITS ...   (e.g. 100000:256 npy:dense:1000000:256)");
      System.exit(2);
    }
    boolean buildHnsw = true;
    for (String a : args) {
      if (a.equals("--no-hnsw-build")) {
        buildHnsw = false;
        continue;
      }
      String[] p = a.split(":");
      if (p[0].equals("npy")) { // npy:DATA:N:BITS: only the codes as a .npy of bool, for command-line builds
        long t0 = System.nanoTime();
        java.nio.file.Path f = BenchData.codesNpy(p[1], Integer.parseInt(p[2]), Integer.parseInt(p[3]));
        log(a, f.toString(), t0);
        continue;
      }
      int n = Integer.parseInt(p[0]), bits = Integer.parseInt(p[1]);
      long t0 = System.nanoTime();
      for (String data : new String[] {"relu", "uniform"}) CodeContenders.storeDir(data, BenchData.codes(data, n, bits));
      log(a, "codes and on-disk indexes", t0);
      for (String kind : new String[] {"in", "ood"}) CosineTruth.get(n, bits, kind, () -> CodeSearchBench.unitActivations(n, bits));
      log(a, "cosine truth", t0);
      if (!buildHnsw && !LuceneHnsw.isCached("relu-n" + n + "-b" + bits)) {
        System.err.println("prepare " + a + ": HNSW index not cached; not built (--no-hnsw-build)");
        continue;
      }
      try (LuceneHnsw h = LuceneHnsw.cached("relu-n" + n + "-b" + bits, BenchData.activations(n, bits), bits)) {
        log(a, "HNSW (" + h.segments() + " segment(s), build " + h.buildMillis() / 1000 + " s)", t0);
      }
    }
  }

  private static void log(String what, String step, long t0) {
    System.err.printf("prepare %s: %s ready after %.1f s%n", what, step, (System.nanoTime() - t0) / 1e9);
  }
}
