package io.actindex.bench;

import io.actindex.index.CodeBlock;
import io.actindex.index.CodeSearcher;
import io.actindex.index.ScanSearcher;

/** The actindex search paths under test, by name, and their memory beyond the codes. */
final class CodeContenders {
  private CodeContenders() {}

  /** Names accepted by {@link #build}. */
  static final String SCAN = "scan";

  static CodeSearcher build(String name, CodeBlock codes) {
    return switch (name) {
      case SCAN -> new ScanSearcher(codes);
      default -> throw new IllegalArgumentException("unknown searcher " + name);
    };
  }

  /** Bytes the searcher holds besides the packed codes (tables, permutations). */
  static long extraBytes(CodeSearcher s) {
    return 0;
  }
}
