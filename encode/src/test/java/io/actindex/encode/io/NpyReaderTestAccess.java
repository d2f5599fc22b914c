package io.actindex.encode.io;

import java.io.IOException;
import java.nio.file.Path;

/** Test access to the whole-file read helper. */
public final class NpyReaderTestAccess {
  private NpyReaderTestAccess() {}

  public static double[] readAll(Path f) throws IOException {
    return NpyReaderTest.readAll(f, 7);
  }
}
