package io.actindex.bench;

import java.nio.file.Path;
import org.junit.jupiter.api.AfterEach;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.io.TempDir;

/** Base of the bench tests that generate data: {@link BenchData}'s cache folder is a fresh temporary one per test. */
abstract class TempBenchCache {
  @TempDir Path dir;
  private String old;

  @BeforeEach
  void useTempCache() {
    old = System.getProperty("actindex.bench.data");
    System.setProperty("actindex.bench.data", dir.toString());
  }

  @AfterEach
  void restore() {
    if (old == null) System.clearProperty("actindex.bench.data");
    else System.setProperty("actindex.bench.data", old);
  }
}
