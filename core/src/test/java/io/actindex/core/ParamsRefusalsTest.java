package io.actindex.core;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import org.junit.jupiter.api.Test;

/**
 * Core refuses a caller's bad value as a {@link BadParameterException} led by the Java parameter's
 * name, never an option (DEVELOPERS.md, "Writing a message"); {@link OptionNames} writes it as an option.
 */
class ParamsRefusalsTest {
  @Test
  void aBadValueIsRefusedByItsJavaName() {
    assertThatThrownBy(() -> new TopK(0)).isInstanceOfSatisfying(BadParameterException.class,
        e -> assertThat(e.parameter()).isEqualTo("k"));
    assertThatThrownBy(() -> Forked.withThreads(-1, () -> 1)).isInstanceOfSatisfying(BadParameterException.class,
        e -> assertThat(e.parameter()).isEqualTo("threads"));
    assertThat(Forked.withThreads(0, () -> 7)).isEqualTo(7);
  }

  @Test
  void theOptionOfAJavaName() {
    java.util.Map<String, String> spelled = java.util.Map.of("columns.key", "--key-column");
    assertThat(OptionNames.option("blockSize", spelled)).isEqualTo("--block-size");
    assertThat(OptionNames.option("k", spelled)).isEqualTo("-k");
    assertThat(OptionNames.option("Source.inputs", spelled)).isEqualTo("--inputs");
    assertThat(OptionNames.option("columns.key", spelled)).isEqualTo("--key-column");
    assertThat(OptionNames.option("Source", spelled)).isNull();
    assertThat(OptionNames.options("no column 'x' (`columns.key`); pass `overwrite`, not `2 + 2`", spelled))
        .isEqualTo("no column 'x' (--key-column); pass --overwrite, not `2 + 2`");
  }
}
