package io.actindex.demo;

import static org.assertj.core.api.Assertions.assertThat;

import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The run that records bin/actindex's class archive must keep working as commands change: a
 * command that starts refusing its arguments would leave the archive without its classes (the
 * script keeps no archive when the run fails), and nobody would see why starts got slower.
 */
class StartupTrainingTest {
  @Test
  void everyCommandOfTheTrainingRunSucceeds(@TempDir Path dir) throws Exception {
    assertThat(StartupTraining.run(dir)).as("every command of the training run exits 0").isTrue();
    assertThat(dir.resolve("index")).isDirectory();
    assertThat(dir.resolve("report.html")).isNotEmptyFile();
    assertThat(Files.size(dir.resolve("codes.npy"))).isGreaterThan(0);
  }
}
