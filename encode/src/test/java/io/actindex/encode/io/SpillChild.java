package io.actindex.encode.io;

/**
 * Child process of {@link SpillKillTest}: opens a Fortran-order {@code .npz} member (which spills
 * to the spill folder), prints {@code open}, and waits to be killed.
 */
public final class SpillChild {
  private SpillChild() {}

  public static void main(String[] args) throws Exception {
    try (NpzReader z = NpzReader.open(java.nio.file.Path.of(args[0])); NpyReader r = z.member(args[1])) {
      System.out.println("open " + r.rows());
      System.out.flush();
      Thread.sleep(120_000);
    }
  }
}
