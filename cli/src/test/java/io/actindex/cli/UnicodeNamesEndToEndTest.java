package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.Randoms;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpzWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A layer, column or metadata field named with an accent is one name whether its file wrote the
 * accent as a combining mark (NFD, {@code cafe} + U+0301) or precomposed (NFC, U+00E9): an index
 * built from NFD files refused NFC query files, {@code --layers} and {@code --where} ("unknown layer
 * 'café' (the layers are café, b)"), and a CSV header in the other form.
 */
class UnicodeNamesEndToEndTest {
  @TempDir Path tmp;

  static final String NFD = "cafe\u0301", NFC = "caf\u00e9";

  private Path npz(String name, String first, float[][] a, float[][] b) throws Exception {
    Path f = tmp.resolve(name);
    try (NpzWriter z = NpzWriter.create(f)) {
      z.member(first, NpyDtype.FLOAT32, a[0].length).write(flat(a), a.length);
      z.member("b", NpyDtype.FLOAT32, b[0].length).write(flat(b), b.length);
      z.commit();
    }
    return f;
  }

  private static float[] flat(float[][] rows) {
    float[] out = new float[rows.length * rows[0].length];
    for (int i = 0; i < rows.length; i++) System.arraycopy(rows[i], 0, out, i * rows[i].length, rows[i].length);
    return out;
  }

  private Path csv(String name, String first, float[][] rows) {
    List<String> lines = new ArrayList<>(List.of(first + ",x1,x2"));
    for (float[] r : rows) lines.add(r[0] + "," + r[1] + "," + r[2]);
    return Files2.text(tmp.resolve(name), lines);
  }

  private static String ok(Cli.Result r) {
    assertThat(r.code()).as(r.describe()).isZero();
    return r.out();
  }

  @Test
  void namesInEitherUnicodeFormAreOneName() throws Exception {
    SplittableRandom rnd = new SplittableRandom(Randoms.seed(0x4e46));
    float[][] a = SourcesEndToEndTest.activations(30, 8, rnd), b = SourcesEndToEndTest.activations(30, 4, rnd);
    float[][] qa = SourcesEndToEndTest.activations(3, 8, rnd), qb = SourcesEndToEndTest.activations(3, 4, rnd);
    List<String> meta = new ArrayList<>(List.of("key," + NFD));
    for (int i = 0; i < 30; i++) meta.add("k" + i + "," + (i % 3));
    Path idx = tmp.resolve("idx");
    ok(Cli.run("build", "--out", idx.toString(), "--activations", npz("train.npz", NFD, a, b).toString(), "--meta",
        Files2.text(tmp.resolve("meta.csv"), meta).toString()));
    assertThat(ok(Cli.run("info", "--index", idx.toString(), "--format", "json"))).contains(NFC + ":8").doesNotContain(NFD);

    List<String> answers = new ArrayList<>();
    for (String query : List.of(NFD, NFC))
      for (String layer : List.of(NFD, NFC))
        for (String field : List.of(NFD, NFC))
          answers.add(ok(Cli.run("nearest", "--index", idx.toString(), "--activations", npz("q.npz", query, qa, qb).toString(), "-k", "3",
              "--layers", layer, "--where", field + " = 1", "--format", "json")));
    assertThat(answers.getFirst()).contains("\"neighbors\":[{");
    assertThat(answers).as("every mix of forms: the same answer").containsOnly(answers.getFirst());

    Path csvIdx = tmp.resolve("csv-idx");
    ok(Cli.run("build", "--out", csvIdx.toString(), "--activations", csv("train.csv", NFD, SourcesEndToEndTest.activations(20, 3, rnd)).toString()));
    float[][] q = SourcesEndToEndTest.activations(2, 3, rnd);
    assertThat(ok(Cli.run("nearest", "--index", csvIdx.toString(), "--activations", csv("q.csv", NFC, q).toString(), "--format", "json")))
        .isEqualTo(ok(Cli.run("nearest", "--index", csvIdx.toString(), "--activations", csv("q2.csv", NFD, q).toString(), "--format", "json")));
  }
}
