package io.actindex.encode.io;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * An {@code .npz} export built its members in a hidden folder {@code .NAME.DIGITS} beside the
 * target, which a killed export left for good (no later write knew it). The members are now
 * temporary files of the target ({@code .NAME.RANDOM.tmp}, the one kind that a later write of the
 * target clears, see core's OutputFilesTest), and the archive reads back as written.
 */
class NpzWriterTest {
  @TempDir Path tmp;

  @Test
  void membersAreTheTargetsTemporaryFilesAndTheArchiveReadsBack() throws IOException {
    Path out = tmp.resolve("acts.npz");
    try (NpzWriter z = NpzWriter.create(out)) {
      z.member("h1", NpyDtype.FLOAT32, 2).write(new double[] {1, 2, 3, 4}, 2);
      z.member("h2", NpyDtype.FLOAT32, 3).write(new double[] {5, 6, 7, 8, 9, 10}, 2);
      List<String> during = names();
      assertThat(during).hasSize(2).allMatch(n -> n.matches("\\.acts\\.npz\\.[0-9a-z]{1,13}\\.tmp"), "temporary files of the target");
      for (String n : during) assertThat(Files.isRegularFile(tmp.resolve(n))).as(n).isTrue();
      z.commit();
    }
    assertThat(names()).containsExactly("acts.npz");
    try (NpzReader z = NpzReader.open(out)) {
      assertThat(z.names()).containsExactly("h1", "h2");
      float[] a = new float[4], b = new float[6];
      try (NpyReader r = z.member("h1")) {
        assertThat(r.read(a, 2)).isEqualTo(2);
      }
      try (NpyReader r = z.member("h2")) {
        assertThat(r.read(b, 2)).isEqualTo(2);
      }
      assertThat(a).containsExactly(1, 2, 3, 4);
      assertThat(b).containsExactly(5, 6, 7, 8, 9, 10);
    }

    // closed without a commit: nothing left, the archive already there unchanged
    byte[] before = Files.readAllBytes(out);
    try (NpzWriter z = NpzWriter.create(out)) {
      z.member("h1", NpyDtype.FLOAT32, 1).write(new double[] {9}, 1);
    }
    assertThat(names()).containsExactly("acts.npz");
    assertThat(Files.readAllBytes(out)).isEqualTo(before);
  }

  private List<String> names() throws IOException {
    try (Stream<Path> s = Files.list(tmp)) {
      return s.map(p -> p.getFileName().toString()).sorted().toList();
    }
  }
}
