package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import io.actindex.cli.Reference.Example;
import io.actindex.cli.Reference.Group;
import io.actindex.cli.Reference.Layer;
import io.actindex.core.Randoms;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.RepeatedTest;
import org.junit.jupiter.api.RepetitionInfo;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** {@code region} and {@code census} JSON against direct computation on small data. */
class RegionCensusEndToEndTest {
  @TempDir Path tmp;

  static final List<Layer> LAYERS = NearestEndToEndTest.LAYERS;

  private Path build(NearestEndToEndTest.Data d, List<Example> ex) {
    Path idx = tmp.resolve("idx");
    Cli.Result r = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), d.index()).toString(),
        "--code-layout", NearestEndToEndTest.LAYOUT, "--meta", NearestEndToEndTest.metaCsv(tmp.resolve("m.csv"), ex).toString());
    assertThat(r.code()).as(r.describe()).isZero();
    return idx;
  }

  @RepeatedTest(3)
  void regionMatchesDirectGrouping(RepetitionInfo rep) throws Exception {
    long seed = Randoms.seed(300 + rep.getCurrentRepetition());
    String what = Randoms.describe(seed);
    // ReLU-like codes crowd into few regions, so radius groups are populated
    NearestEndToEndTest.Data d = NearestEndToEndTest.data(300, 1, 6, true, seed);
    List<Example> ex = NearestEndToEndTest.examples(d.index(), 0, "r", seed);
    Path idx = build(d, ex);
    String q = Files2.bits(tmp.resolve("q.npy"), d.queries()).toString();
    int radius = 4;
    for (List<Layer> on : List.of(LAYERS, List.of(LAYERS.get(1)))) {
      List<String> args = new ArrayList<>(List.of("region", "--index", idx.toString(), "--codes", q, "--radius",
          Integer.toString(radius), "--format", "json", "--examples", "2"));
      if (on.size() == 1) args.addAll(List.of("--layers", on.get(0).name()));
      JsonNode doc = NearestEndToEndTest.json(args.toArray(String[]::new));
      assertThat(doc.get("radius").asInt()).isEqualTo(radius);
      for (int qi = 0; qi < d.queries().length; qi++) {
        JsonNode r = doc.get("results").get(qi);
        assertThat(r.get("query").asInt()).isEqualTo(qi);
        Map<String, Group> expected = Reference.groups(ex, d.queries()[qi], radius, on);
        Group same = expected.remove("");
        JsonNode js = r.get("same");
        assertThat(js.get("count").asInt()).as(what).isEqualTo(same == null ? 0 : same.count());
        if (same != null) checkGroup(js, same, ex, what);
        assertThat(r.get("nearby").size()).as(what + " query " + qi).isEqualTo(expected.size());
        int last = 0;
        for (JsonNode g : r.get("nearby")) {
          List<String> flipped = new ArrayList<>();
          g.get("flipped").forEach(f -> flipped.add(f.asText()));
          Group e = expected.get(String.join(" ", flipped));
          assertThat(e).as(what + ": a region the scan does not know: " + flipped).isNotNull();
          assertThat(g.get("distance").asInt()).as(what).isEqualTo(flipped.size()).isGreaterThanOrEqualTo(last);
          last = g.get("distance").asInt();
          checkGroup(g, e, ex, what);
        }
      }
      csvListsMatchJson(doc, args, what);
    }
  }

  /** The CSV's list cells ({@code ;}-separated, docs/commands/README.md) hold what the JSON lists. */
  private static void csvListsMatchJson(JsonNode doc, List<String> args, String what) {
    List<String> csvArgs = new ArrayList<>(args);
    csvArgs.set(csvArgs.indexOf("json"), "csv");
    Cli.Result r = Cli.run(csvArgs.toArray(String[]::new));
    assertThat(r.code()).as(r.describe()).isZero();
    assertThat(r.out().lines().findFirst()).hasValue("query,distance,count,labels,flipped,keys");
    List<String[]> rows = CsvCells.rows(r.out());
    int i = 0;
    for (JsonNode q : doc.get("results")) {
      List<JsonNode> groups = new ArrayList<>(List.of(q.get("same")));
      q.get("nearby").forEach(groups::add);
      for (JsonNode g : groups) {
        String[] row = rows.get(i++);
        assertThat(row[0]).as(what).isEqualTo(q.get("query").asText());
        assertThat(row[1]).as(what).isEqualTo(g.get("distance").asText());
        Map<String, Integer> labels = new java.util.LinkedHashMap<>();
        g.get("labels").fields().forEachRemaining(f -> labels.put(f.getKey(), f.getValue().asInt()));
        assertThat(CsvCells.counts(row[3])).as(what + ": labels, in order").containsExactlyEntriesOf(labels);
        assertThat(CsvCells.items(row[4])).as(what + ": flipped").isEqualTo(texts(g.get("flipped")));
        assertThat(CsvCells.items(row[5])).as(what + ": keys").isEqualTo(texts(g.get("keys")));
      }
    }
    assertThat(rows).as(what).hasSize(i);
  }

  static List<String> texts(JsonNode array) {
    List<String> out = new ArrayList<>();
    array.forEach(v -> out.add(v.asText()));
    return out;
  }

  private static void checkGroup(JsonNode g, Group e, List<Example> ex, String what) {
    assertThat(g.get("count").asInt()).as(what).isEqualTo(e.count());
    Map<String, Integer> labels = new HashMap<>();
    g.get("labels").fields().forEachRemaining(f -> labels.put(f.getKey(), f.getValue().asInt()));
    assertThat(labels).as(what).isEqualTo(e.labels());
    List<String> keys = new ArrayList<>();
    g.get("keys").forEach(k -> keys.add(k.asText()));
    List<String> expectedKeys = e.ids().stream().limit(2).map(id -> ex.get(id).meta().get("key")).toList();
    assertThat(keys).as(what + ": example keys, smallest ids first").isEqualTo(expectedKeys);
  }

  @Test
  void censusMatchesDirectCounts() throws Exception {
    long seed = Randoms.seed(400);
    String what = Randoms.describe(seed);
    NearestEndToEndTest.Data d = NearestEndToEndTest.data(400, 1, 1, true, seed);
    List<Example> ex = NearestEndToEndTest.examples(d.index(), 0, "c", seed);
    Path idx = build(d, ex);
    JsonNode doc = NearestEndToEndTest.json("census", "--index", idx.toString(), "--format", "json");
    assertThat(doc.get("examples").asInt()).isEqualTo(ex.size());
    JsonNode prefixes = doc.get("prefixes");
    assertThat(prefixes.size()).isEqualTo(2);
    for (int p = 0; p < 2; p++) {
      List<Layer> prefix = LAYERS.subList(0, p + 1);
      Map<String, List<Example>> regions = Reference.regions(ex, prefix);
      JsonNode jp = prefixes.get(p);
      assertThat(jp.get("layers").size()).isEqualTo(p + 1);
      assertThat(jp.get("bits").asInt()).isEqualTo(prefix.stream().mapToInt(Layer::bits).sum());
      assertThat(jp.get("regions").asInt()).as(what).isEqualTo(regions.size());
      assertThat(jp.get("singletons").asInt()).as(what).isEqualTo((int) regions.values().stream().filter(l -> l.size() == 1).count());
      assertThat(jp.get("purity").asDouble()).as(what).isCloseTo(Reference.purity(regions), org.assertj.core.data.Offset.offset(1e-12));
      int max = regions.values().stream().mapToInt(List::size).max().orElseThrow();
      assertThat(jp.get("examples_per_region").get("max").asInt()).as(what).isEqualTo(max);
      long histExamples = 0, histRegions = 0;
      for (JsonNode b : jp.get("histogram")) {
        histExamples += b.get("examples").asLong();
        histRegions += b.get("regions").asLong();
      }
      assertThat(histExamples).isEqualTo(ex.size());
      assertThat(histRegions).isEqualTo(regions.size());
      assertThat(jp.get("largest").get(0).get("count").asInt()).isEqualTo(max);
    }
    JsonNode neurons = doc.get("neurons");
    assertThat(neurons.size()).isEqualTo(2);
    for (int l = 0; l < 2; l++) {
      Layer layer = LAYERS.get(l);
      JsonNode jn = neurons.get(l);
      assertThat(jn.get("layer").asText()).isEqualTo(layer.name());
      List<String> dead = new ArrayList<>(), always = new ArrayList<>();
      for (int u = 0; u < layer.bits(); u++) {
        int on = 0;
        for (Example e : ex) if (e.bits()[layer.start() + u]) on++;
        assertThat(jn.get("firing_rates").get(u).asDouble()).as(what).isEqualTo(on / (double) ex.size());
        if (on == 0) dead.add(layer.name() + ":" + u);
        if (on == ex.size()) always.add(layer.name() + ":" + u);
      }
      List<String> gotDead = new ArrayList<>(), gotAlways = new ArrayList<>();
      jn.get("dead").forEach(x -> gotDead.add(x.asText()));
      jn.get("always_on").forEach(x -> gotAlways.add(x.asText()));
      assertThat(gotDead).as(what).isEqualTo(dead);
      assertThat(gotAlways).as(what).isEqualTo(always);
      // 400 examples: enough to call units dead, with the 95% bound 1 - 0.05^(1/400) beside them
      assertThat(jn.get("too_few_examples").asBoolean()).isFalse();
      assertThat(jn.get("rate_bound").asDouble()).isCloseTo(1 - Math.pow(0.05, 1 / 400.0), org.assertj.core.data.Offset.offset(1e-12));
    }
    Cli.Result table = Cli.run("census", "--index", idx.toString());
    assertThat(table.code()).as(table.describe()).isZero();
    assertThat(table.out()).contains("examples: 400").contains("h1+h2").contains("neurons:")
        .contains("Dead: never on in these 400 examples, so its firing rate on inputs like them is below 0.75% (95% upper bound)");
  }
}
