package io.actindex.query;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;

import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

class VoteTest {
  static Nearest.Neighbor nb(int dist, String label) {
    return new Nearest.Neighbor(dist, "k", dist, Map.of(), label, null, Map.of());
  }

  @Test
  void majorityThenTotalDistanceThenName() {
    assertEquals(new Nearest.Vote("b", 2, 3, 2 / 3.0, 3, 2, false, 0), Nearest.vote(List.of(nb(0, "a"), nb(1, "b"), nb(2, "b"))));
    // 2 vs 2: "b" has total distance 1+2 = 3 < "a" with 0+4
    assertEquals("b", Nearest.vote(List.of(nb(0, "a"), nb(1, "b"), nb(2, "b"), nb(4, "a"))).label());
    // 2 vs 2 with equal totals: the smaller name
    assertEquals("a", Nearest.vote(List.of(nb(1, "b"), nb(1, "a"), nb(2, "b"), nb(2, "a"))).label());
    // unlabelled neighbours do not vote
    assertEquals(new Nearest.Vote("c", 1, 1, 1.0, 3, 2, false, 0), Nearest.vote(List.of(nb(0, null), nb(1, "c"), nb(2, ""))));
    assertNull(Nearest.vote(List.of(nb(0, null))));
  }
}
