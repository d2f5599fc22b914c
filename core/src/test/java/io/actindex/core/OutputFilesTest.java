package io.actindex.core;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * An output file never lands in an index folder: 'report --out idx/manifest-6' replaced the
 * manifest with HTML (the index was lost), and 'export-edge --c-source idx' or 'dupes --pairs
 * idx/x.csv' added files to a folder whose files only the index's writer may touch.
 */
class OutputFilesTest {
  @TempDir Path tmp;

  @Test
  void targetsInsideAnIndexFolderAreRefusedAndNothingIsWritten() throws IOException {
    Path idx = Files.createDirectories(tmp.resolve("idx"));
    Files.write(idx.resolve("manifest-6"), new byte[] {1, 2, 3});
    Path meta = Files.createDirectories(idx.resolve("meta"));
    for (Path target : new Path[] {idx.resolve("manifest-6"), idx.resolve("report.html"), meta.resolve("x.csv")}) {
      assertThatThrownBy(() -> OutputFiles.write(target, new byte[] {9}, "--out")).as(target.toString())
          .isInstanceOf(BadInputException.class).hasMessageContaining(target.toString()).hasMessageContaining("index folder")
          .hasMessageContaining("--out");
    }
    assertThat(Files.readAllBytes(idx.resolve("manifest-6"))).containsExactly(1, 2, 3);
    try (var files = Files.list(idx)) {
      assertThat(files.map(p -> p.getFileName().toString())).containsExactlyInAnyOrder("manifest-6", "meta");
    }
    assertThat(meta.toFile().list()).isEmpty();
    // a folder with only a lock file is an index folder too (an index being built); other folders are fine
    Path building = Files.createDirectories(tmp.resolve("building"));
    Files.createFile(building.resolve("writer.lock"));
    assertThatThrownBy(() -> OutputFiles.checkTarget(building.resolve("r.html"), "--html")).isInstanceOf(BadInputException.class);
    Path plain = Files.createDirectories(tmp.resolve("reports"));
    Files.writeString(plain.resolve("manifest-notes.txt"), "x");
    OutputFiles.write(plain.resolve("r.html"), new byte[] {7}, "--out");
    assertThat(Files.readAllBytes(plain.resolve("r.html"))).containsExactly(7);
  }
}
