package io.actindex.cluster;

import io.actindex.core.CodeBlock;
import io.actindex.core.SyntheticCodes;
import io.actindex.encode.CodeFiles;
import java.nio.file.Files;
import java.nio.file.Path;

/**
 * Writes generated codes as packed .npy shards for the "Cluster self-join" benchmark:
 * {@code BenchData OUT_DIR ROWS SHARDS uniform|relu SEED}. Uniform: 256-bit random codes, 1% of the
 * rows replaced by near copies (0..4 flips) of others. ReLU-like: {@link SyntheticCodes#reluLike}
 * with 128 + 128 units (skewed; many identical codes).
 */
public final class BenchData {
  private BenchData() {}

  public static void main(String[] args) throws Exception {
    Path dir = Path.of(args[0]);
    int rows = Integer.parseInt(args[1]), shards = Integer.parseInt(args[2]);
    String kind = args[3];
    long seed = Long.parseLong(args[4]);
    Files.createDirectories(dir);
    int per = (rows + shards - 1) / shards;
    for (int s = 0; s < shards; s++) {
      int n = Math.min(per, rows - s * per);
      CodeBlock c = kind.equals("relu") ? SyntheticCodes.reluLike(n, 128, 128, seed + s).codes()
          : Fixtures.planted(SyntheticCodes.uniform(n - n / 100, 256, seed + s), n / 100, 4, seed + s + 1000);
      Fixtures.writeShard(dir.resolve(String.format("part-%05d.npy", s)), c, 0, n, CodeFiles.Form.PACKED);
      System.err.println("wrote shard " + s + ": " + n + " rows");
    }
  }
}
