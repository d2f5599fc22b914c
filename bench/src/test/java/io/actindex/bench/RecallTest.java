package io.actindex.bench;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import org.junit.jupiter.api.Test;

class RecallTest {
  @Test
  void shareOfTheExactNeighboursFound() {
    int[][] truth = {{1, 2, 3}, {7, 8, 9}};
    int[][] found = {{3, 4, 1}, {7, 8, 9}};
    assertThat(Recall.atK(truth, found, 3)).isEqualTo((2.0 / 3 + 1) / 2);
  }

  @Test
  void onlyTheFirstKCount() {
    int[][] truth = {{1, 2, 3, 4}};
    assertThat(Recall.atK(truth, new int[][] {{2, 1, 9, 3}}, 2)).isEqualTo(1.0);
    assertThat(Recall.atK(truth, new int[][] {{9, 1, 2, 3}}, 2)).isEqualTo(0.5);
  }

  @Test
  void aRepeatedRowCountsOnce() {
    assertThat(Recall.atK(new int[][] {{1, 2}}, new int[][] {{1, 1}}, 2)).isEqualTo(0.5);
  }

  @Test
  void shortAnswersAndMismatchedInput() {
    assertThat(Recall.atK(new int[][] {{1, 2}}, new int[][] {{2}}, 2)).isEqualTo(0.5);
    assertThatThrownBy(() -> Recall.atK(new int[][] {{1}}, new int[0][], 1)).isInstanceOf(IllegalArgumentException.class);
  }
}
