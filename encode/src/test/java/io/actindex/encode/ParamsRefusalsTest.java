package io.actindex.encode;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadParameterException;
import io.actindex.encode.mlp.MlpTrainer;
import org.assertj.core.api.ThrowableAssert.ThrowingCallable;
import org.junit.jupiter.api.Test;

/**
 * The encode module refuses a caller's bad value as a {@link BadParameterException} led by the Java
 * parameter's name, never an option (DEVELOPERS.md, "Writing a message").
 */
class ParamsRefusalsTest {
  @Test
  void aStreamRefusesAChunkOfNoRows() throws Exception {
    try (CodeStream s = Encoders.activations(Golden.path("f4_C_le.npy"), EncodeOptions.positive())) {
      refused("maxRows", () -> s.next(0));
      assertThat(s.next(1).size()).isEqualTo(1); // the refusal read nothing
    }
    try (CodeStream s = Encoders.codes(Golden.path("codes_bool.npy"), null)) {
      refused("maxRows", () -> s.next(-1));
      assertThat(s.next(1).size()).isEqualTo(1);
    }
  }

  @Test
  void theTrainerNamesEachSetting() {
    refused("hidden", () -> new MlpTrainer.Config(new int[] {4, 0}, 1, 8, 1e-3, 1));
    refused("epochs", () -> new MlpTrainer.Config(new int[] {4}, -1, 8, 1e-3, 1));
    refused("batchSize", () -> new MlpTrainer.Config(new int[] {4}, 1, 0, 1e-3, 1));
    refused("learningRate", () -> new MlpTrainer.Config(new int[] {4}, 1, 8, 0, 1));
    refused("learningRate", () -> new MlpTrainer.Config(new int[] {4}, 1, 8, Double.NaN, 1));
    MlpTrainer.Config ok = new MlpTrainer.Config(new int[] {4}, 1, 8, 1e-3, 1);
    double[][] x = {{0, 1}, {1, 0}};
    refused("y", () -> MlpTrainer.train(x, new int[] {0}, 2, ok));
    refused("y", () -> MlpTrainer.train(x, new int[] {0, 2}, 2, ok));
  }

  static void refused(String parameter, ThrowingCallable call) {
    assertThatThrownBy(call).as(parameter).isInstanceOfSatisfying(BadParameterException.class, e -> {
      assertThat(e.parameter()).as(e.getMessage()).isEqualTo(parameter);
      assertThat(e.getMessage()).startsWith(parameter).doesNotContain("--");
    });
  }
}
