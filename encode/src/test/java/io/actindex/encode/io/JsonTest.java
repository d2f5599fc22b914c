package io.actindex.encode.io;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

class JsonTest {
  @Test
  void parsesValues() {
    Object v = Json.parse(" {\"a\": [1, -2.5e3, true, false, null], \"b\": {\"c\": \"x\\\"y\\u0041\\n\"}, \"d\": []} ");
    assertThat(v).isEqualTo(Map.of("a", java.util.Arrays.asList(1L, -2500.0, true, false, null),
        "b", Map.of("c", "x\"yA\n"), "d", List.of()));
  }

  @Test
  void rejectsBrokenText() {
    assertThatThrownBy(() -> Json.parse("{\"a\": 1")).isInstanceOf(IllegalArgumentException.class);
    assertThatThrownBy(() -> Json.parse("[1 2]")).isInstanceOf(IllegalArgumentException.class);
    assertThatThrownBy(() -> Json.parse("[1] x")).isInstanceOf(IllegalArgumentException.class);
  }
}
