package io.actindex.query;

import io.actindex.index.store.StoreIo;
import java.io.IOException;
import java.nio.channels.FileChannel;
import java.nio.file.Path;

/**
 * Builds an index from a codes file and stops the JVM with {@code Runtime.halt} (no clean-up runs,
 * as under kill -9) right after its k-th file operation (create, force, move, folder sync, delete);
 * k below 1: never. Prints the number of operations when the build completes. Run by
 * {@link KilledBuildTest}.
 */
final class KilledBuildChild {
  private KilledBuildChild() {}

  public static void main(String[] args) {
    Path dir = Path.of(args[0]), codes = Path.of(args[1]);
    int haltAt = Integer.parseInt(args[2]);
    int[] ops = {0};
    StoreIo io = new StoreIo.Forwarding(StoreIo.REAL) {
      private void step() {
        if (++ops[0] == haltAt) Runtime.getRuntime().halt(9);
      }

      @Override
      public FileChannel create(Path file) throws IOException {
        FileChannel c = super.create(file);
        step();
        return c;
      }

      @Override
      public void force(FileChannel channel, Path file) throws IOException {
        super.force(channel, file);
        step();
      }

      @Override
      public void move(Path from, Path to) throws IOException {
        super.move(from, to);
        step();
      }

      @Override
      public void syncDir(Path folder) throws IOException {
        super.syncDir(folder);
        step();
      }

      @Override
      public void delete(Path file) throws IOException {
        super.delete(file);
        step();
      }
    };
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.codes(codes), null), null, io);
    System.out.println(ops[0]);
  }
}
