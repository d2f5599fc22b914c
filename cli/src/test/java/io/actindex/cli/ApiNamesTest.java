package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import java.util.List;
import org.junit.jupiter.api.Test;

/** Java API names in the library's messages, as the command line prints them. */
class ApiNamesTest {

  @Test
  void aJavaNameBecomesItsOption() {
    assertThat(ApiNames.option("checkOverlap")).isEqualTo("--check-overlap");
    assertThat(ApiNames.option("matrixRows")).isEqualTo("--matrix-rows");
    assertThat(ApiNames.option("cSource")).isEqualTo("--c-source");
    assertThat(ApiNames.option("k")).isEqualTo("-k");
    // class names are left out, other parts joined
    assertThat(ApiNames.option("Source.inputs")).isEqualTo("--inputs");
    assertThat(ApiNames.option("a.where")).isEqualTo("--a-where");
    // spelled otherwise on the command line
    assertThat(ApiNames.option("magnitudeBits")).isEqualTo("--magnitudes");
    assertThat(ApiNames.option("magnitudeBits 0")).isEqualTo("--magnitudes off");
    assertThat(ApiNames.option("BuildParams.dir")).isEqualTo("--out");
    assertThat(ApiNames.option("keysFile")).isEqualTo("--keys");
    // not a name, or a class alone
    assertThat(ApiNames.option("two words")).isNull();
    assertThat(ApiNames.option("Source.Kind")).isNull();
    assertThat(ApiNames.option("x-y")).isNull();
  }

  @Test
  void everyBackquotedNameOfATextIsWrittenAsItsOption() {
    assertThat(ApiNames.options("q.npy: the refined score needs the queries' activations (`Source.activations`) or inputs (`Source.inputs`), "
        + "not codes; use `score` code for codes"))
        .isEqualTo("q.npy: the refined score needs the queries' activations (--activations) or inputs (--inputs), not codes; use --score code for codes");
    assertThat(ApiNames.options("built with `magnitudeBits 0`; build it again with `magnitudeBits` 8"))
        .isEqualTo("built with --magnitudes off; build it again with --magnitudes 8");
    assertThat(ApiNames.options(List.of("(`header` no)", "plain"))).containsExactly("(--header no)", "plain");
    // what is not a name stays as written, backquotes and all; a lone backquote too
    assertThat(ApiNames.options("column `my col` of `Source.Kind`, a ` b")).isEqualTo("column `my col` of `Source.Kind`, a ` b");
    assertThat(ApiNames.options("a $1 and a \\ stay (`k`)")).isEqualTo("a $1 and a \\ stay (-k)");
    assertThat(ApiNames.options((String) null)).isNull();
  }
}
