package io.actindex.core;

import java.nio.ByteBuffer;
import java.nio.file.Files;
import java.nio.file.Path;

/**
 * A process in the middle of writing an output file, for {@link OutputFilesTest}: begins {@code
 * TARGET}, writes a few bytes, names its temporary file in {@code READY} and waits to be killed.
 */
public final class OutputFilesChild {
  private OutputFilesChild() {}

  public static void main(String[] args) throws Exception {
    OutputFiles.Temp t = OutputFiles.begin(Path.of(args[0]));
    t.channel().write(ByteBuffer.wrap(new byte[] {1, 2, 3}));
    Path ready = Path.of(args[1]);
    Path part = ready.resolveSibling(ready.getFileName() + ".part");
    Files.writeString(part, t.path().toString());
    Files.move(part, ready); // whole, so the parent never reads half a name
    Thread.sleep(Long.MAX_VALUE);
  }
}
