package io.actindex.bench;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeSearcher;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

/** Every contender the benchmarks time answers exactly what brute force answers. */
class CodeContendersTest extends TempBenchCache {
  @BeforeAll
  static void blankSeedIsNoSeed() {
    String s = System.getProperty("tests.seed"); // Lucene (metadata store) parses a present tests.seed as hex
    if (s != null && s.isBlank()) System.clearProperty("tests.seed");
  }

  @ParameterizedTest
  @CsvSource({"relu,128,in", "relu,128,ood", "uniform,64,in", "uniform,64,ood", "relu,256,in"})
  void contendersAreExact(String data, int bits, String kind) {
    int n = 3000;
    CodeBlock codes = BenchData.codes(data, n, bits);
    long[][] queries = BenchData.queries(data, kind, n, bits).codeArrays();
    for (String name : new String[] {"scan", "planner", "mih", "cascade", "store"}) {
      CodeSearcher s = CodeContenders.build(name, codes, data).searcher();
      for (int q = 0; q < 12; q++) {
        String what = name + " " + data + " " + kind + " query " + q;
        assertThat(s.knn(queries[q], 10)).as(what).isEqualTo(BruteForce.knn(codes, queries[q], 10, null, null));
        assertThat(s.radius(queries[q], 3)).as(what).isEqualTo(BruteForce.radius(codes, queries[q], 3, null, null));
      }
    }
  }
}
