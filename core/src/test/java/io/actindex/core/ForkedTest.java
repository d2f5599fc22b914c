package io.actindex.core;

import static org.assertj.core.api.Assertions.assertThat;

import java.util.stream.IntStream;
import org.junit.jupiter.api.Test;

class ForkedTest {
  /**
   * 'build --threads 100000' (and add, compact) ended in an internal error: the JDK's fork-join
   * pool refuses more than 32,767 workers (ForkJoinPool javadoc: "greater than implementation
   * limit"). Any count works now, the answer the same.
   */
  @Test
  void anyThreadCountRunsTheWork() {
    for (int threads : new int[] {0, 1, 3, 32_767, 32_768, 100_000, Integer.MAX_VALUE})
      assertThat(Forked.withThreads(threads, () -> IntStream.range(0, 10_000).parallel().sum())).as("threads " + threads)
          .isEqualTo(49_995_000);
  }
}
