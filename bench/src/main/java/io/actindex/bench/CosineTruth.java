package io.actindex.bench;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.util.function.Supplier;

/**
 * The exact cosine 10 nearest rows of the first {@link #QUERIES} queries of a pool, computed with
 * {@link ExactCosine} and cached in the bench data folder: the reference for recall.
 */
public final class CosineTruth {
  private CosineTruth() {}

  public static final int QUERIES = 100, K = 10;

  /**
   * Truth for the relu data set of n rows at {@code bits}, query kind {@code kind}; {@code unitRows}
   * (the normalized activations) is asked for only when the cache lacks the answer.
   */
  public static int[][] get(int n, int bits, String kind, Supplier<float[]> unitRows) {
    Path f = BenchData.dir().resolve("relu-truth-" + kind + "-n" + n + "-b" + bits + "-k" + K + ".bin");
    try {
      if (Files.exists(f) && Files.size(f) == 4L * QUERIES * K) {
        ByteBuffer b = ByteBuffer.wrap(Files.readAllBytes(f)).order(ByteOrder.LITTLE_ENDIAN);
        int[][] out = new int[QUERIES][K];
        for (int[] row : out) for (int j = 0; j < K; j++) row[j] = b.getInt();
        return out;
      }
      float[][] q = BenchData.queries("relu", kind, n, bits).activationRows();
      float[] rows = unitRows.get();
      float[] scratch = new float[n];
      int[][] out = new int[QUERIES][];
      ByteBuffer b = ByteBuffer.allocate(4 * QUERIES * K).order(ByteOrder.LITTLE_ENDIAN);
      for (int i = 0; i < QUERIES; i++) {
        out[i] = ExactCosine.knnLoops(rows, bits, q[i], K, scratch);
        for (int r : out[i]) b.putInt(r);
      }
      Path tmp = f.resolveSibling(f.getFileName() + ".tmp");
      Files.write(tmp, b.array());
      Files.move(tmp, f, StandardCopyOption.REPLACE_EXISTING, StandardCopyOption.ATOMIC_MOVE);
      return out;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }
}
