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

  /**
   * An output that is one of the command's inputs would replace it: 'report --out a.npy
   * --compare-a a.npy' turned the sample into HTML. Refused under every name of the same file.
   */
  @Test
  void aTargetThatIsAnInputIsRefusedUnderAnyOfItsNames() throws IOException {
    Path input = Files.write(tmp.resolve("a.npy"), new byte[] {1, 2, 3});
    Path other = Files.write(tmp.resolve("b.npy"), new byte[] {4});
    Path link = Files.createSymbolicLink(tmp.resolve("link.npy"), input);
    Path hard = Files.createLink(tmp.resolve("hard.npy"), input);
    Path dotted = tmp.resolve(".").resolve("a.npy");
    for (Path target : new Path[] {input, link, hard, dotted}) {
      assertThatThrownBy(() -> OutputFiles.checkTarget(target, "--out", new OutputFiles.Input("--compare-b", other),
          new OutputFiles.Input("--compare-a", input))).as(target.toString()).isInstanceOf(BadInputException.class)
          .hasMessageStartingWith(target + ": --out is the same file as the input --compare-a (" + input + ")");
      // the input named through the other spelling is caught too
      assertThatThrownBy(() -> OutputFiles.checkNotInput(input, "--html", new OutputFiles.Input("--in", target)))
          .isInstanceOf(BadInputException.class).hasMessageContaining("--html").hasMessageContaining("--in");
    }
    assertThat(Files.readAllBytes(input)).containsExactly(1, 2, 3);
    // relative names of a file that does not exist yet: compared as normalized absolute paths
    Path rel = Path.of("not-there-" + System.nanoTime() + ".csv");
    assertThatThrownBy(() -> OutputFiles.checkNotInput(Path.of(".", rel.toString()), "--pairs", new OutputFiles.Input("--against", rel)))
        .isInstanceOf(BadInputException.class).hasMessageContaining("--pairs").hasMessageContaining("--against");
    // a different file, or no input, is fine
    OutputFiles.checkTarget(tmp.resolve("c.html"), "--out", new OutputFiles.Input("--compare-a", input), new OutputFiles.Input("--x", null));
    OutputFiles.checkTarget(other, "--out", new OutputFiles.Input("--compare-a", input));
  }

  /**
   * 'build --out idx/sub' put a second index inside the first: every folder above the new one is
   * looked at, and output files deep inside an index folder are refused the same way.
   */
  @Test
  void aNewIndexInsideAnIndexFolderIsRefusedAtAnyDepth() throws IOException {
    Path idx = Files.createDirectories(tmp.resolve("idx"));
    Files.write(idx.resolve("manifest-2"), new byte[] {1});
    for (Path dir : new Path[] {idx.resolve("sub"), idx.resolve("meta").resolve("x"), idx.resolve("a").resolve("b").resolve("c")}) {
      assertThatThrownBy(() -> OutputFiles.checkIndexPlace(dir, "--out")).as(dir.toString()).isInstanceOf(BadInputException.class)
          .hasMessageStartingWith(dir + ": is inside the index folder " + idx).hasMessageContaining("--out");
      assertThat(OutputFiles.indexAbove(dir)).isEqualTo(idx);
    }
    assertThatThrownBy(() -> OutputFiles.checkOutsideIndex(idx.resolve("a").resolve("b").resolve("r.html"), "--out"))
        .isInstanceOf(BadInputException.class).hasMessageContaining("index folder");
    assertThat(Files.exists(idx.resolve("sub"))).isFalse();
    // beside the index, or an index folder itself (build refuses it as not empty), is not inside one
    OutputFiles.checkIndexPlace(tmp.resolve("idx2"), "--out");
    OutputFiles.checkIndexPlace(idx, "--out");
    assertThat(OutputFiles.indexAbove(tmp.resolve("idx2").resolve("deeper"))).isNull();
  }
}
