package io.actindex.cli.format;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import com.fasterxml.jackson.core.StreamReadFeature;
import com.fasterxml.jackson.databind.DeserializationFeature;
import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.json.JsonMapper;
import io.actindex.core.Randoms;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.RepeatedTest;
import org.junit.jupiter.api.Test;

/** Our JSON writer, read back with an outside reference parser (Jackson databind 2.22). */
public class JsonWriterTest {
  public static final ObjectMapper STRICT = JsonMapper.builder()
      .enable(StreamReadFeature.STRICT_DUPLICATE_DETECTION)
      .enable(DeserializationFeature.FAIL_ON_TRAILING_TOKENS)
      .build();

  @Test
  void escapesWhatRfc8259Section7Requires() throws Exception {
    // RFC 8259, section 7: quotation mark, reverse solidus and U+0000..U+001F must be escaped.
    StringBuilder sb = new StringBuilder();
    new JsonWriter(sb).value("a\"b\\c\n\t\u0000\u001f/é😀");
    assertThat(sb.toString()).isEqualTo("\"a\\\"b\\\\c\\n\\t\\u0000\\u001f/é😀\"");
    assertThat(STRICT.readTree(sb.toString()).textValue()).isEqualTo("a\"b\\c\n\t\u0000\u001f/é😀");
  }

  @Test
  void aNumberThatMayBeAbsentIsNullOrTheNumber() throws Exception {
    StringBuilder sb = new StringBuilder();
    Integer none = null;
    Double half = 0.5;
    new JsonWriter(sb).beginObject().member("a", none).member("b", (Integer) 7).member("c", half).member("d", (Long) 9007199254740993L)
        .endObject();
    assertThat(sb.toString()).isEqualTo("{\"a\":null,\"b\":7,\"c\":0.5,\"d\":9007199254740993}");
    JsonNode n = STRICT.readTree(sb.toString());
    assertThat(n.get("a").isNull()).isTrue();
    assertThat(n.get("d").longValue()).isEqualTo(9007199254740993L); // a long above 2^53 is not rounded through a double
  }

  @Test
  void loneSurrogatesAreEscaped() throws Exception {
    StringBuilder sb = new StringBuilder();
    new JsonWriter(sb).value("x\ud800y\udc00");
    assertThat(sb.toString()).isEqualTo("\"x\\ud800y\\udc00\"");
  }

  @Test
  void nestedDocumentReadsBack() throws Exception {
    StringBuilder sb = new StringBuilder();
    Map<String, String> meta = new LinkedHashMap<>();
    meta.put("shift", "night");
    meta.put("note", null);
    new JsonWriter(sb).beginObject()
        .member("k", 3)
        .name("results").beginArray()
          .beginObject().member("query", 0).name("neighbors").beginArray().endArray().endObject()
          .beginObject().member("score", 0.25).member("nan", Double.NaN).name("ok").value(true)
            .name("meta").stringMap(meta).endObject()
        .endArray()
        .endObject();
    JsonNode root = STRICT.readTree(sb.toString());
    assertThat(root.get("k").asInt()).isEqualTo(3);
    assertThat(root.get("results").get(0).get("neighbors").size()).isZero();
    assertThat(root.get("results").get(1).get("score").doubleValue()).isEqualTo(0.25);
    assertThat(root.get("results").get(1).get("nan").isNull()).isTrue();
    assertThat(root.get("results").get(1).get("ok").booleanValue()).isTrue();
    assertThat(root.get("results").get(1).get("meta").get("shift").textValue()).isEqualTo("night");
    assertThat(root.get("results").get(1).get("meta").get("note").isNull()).isTrue();
  }

  @RepeatedTest(20)
  void randomStringsAndNumbersRoundTrip() throws Exception {
    long seed = Randoms.seed(17);
    SplittableRandom rnd = new SplittableRandom(seed);
    StringBuilder sb = new StringBuilder();
    JsonWriter w = new JsonWriter(sb).beginArray();
    String[] strings = new String[50];
    double[] doubles = new double[50];
    for (int i = 0; i < 50; i++) {
      StringBuilder s = new StringBuilder();
      int len = rnd.nextInt(12);
      for (int j = 0; j < len; j++) {
        int cp = switch (rnd.nextInt(4)) {
          case 0 -> rnd.nextInt(0x20);
          case 1 -> 0x20 + rnd.nextInt(0x60);
          case 2 -> 0xa0 + rnd.nextInt(0xd000);
          default -> 0x10000 + rnd.nextInt(0x1000);
        };
        s.appendCodePoint(cp);
      }
      strings[i] = s.toString();
      doubles[i] = switch (rnd.nextInt(3)) {
        case 0 -> rnd.nextDouble() * Math.pow(10, rnd.nextInt(-300, 300));
        case 1 -> rnd.nextInt(-1000, 1000);
        default -> -rnd.nextDouble();
      };
      w.value(strings[i]).value(doubles[i]);
    }
    w.endArray();
    assertThat(w.isComplete()).isTrue();
    JsonNode arr = STRICT.readTree(sb.toString());
    for (int i = 0; i < 50; i++) {
      assertThat(arr.get(2 * i).textValue()).as(Randoms.describe(seed)).isEqualTo(strings[i]);
      assertThat(arr.get(2 * i + 1).doubleValue()).as(Randoms.describe(seed)).isEqualTo(doubles[i]);
    }
  }

  @Test
  void misuseIsRefused() {
    assertThatThrownBy(() -> new JsonWriter(new StringBuilder()).beginObject().value(1)).isInstanceOf(IllegalStateException.class);
    assertThatThrownBy(() -> new JsonWriter(new StringBuilder()).beginArray().endObject()).isInstanceOf(IllegalStateException.class);
    assertThatThrownBy(() -> new JsonWriter(new StringBuilder()).beginArray().name("x")).isInstanceOf(IllegalStateException.class);
    assertThatThrownBy(() -> new JsonWriter(new StringBuilder()).value(1).value(2)).isInstanceOf(IllegalStateException.class);
    assertThatThrownBy(() -> new JsonWriter(new StringBuilder()).beginObject().endObject().beginArray())
        .isInstanceOf(IllegalStateException.class);
  }
}
