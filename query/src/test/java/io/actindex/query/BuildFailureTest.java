package io.actindex.query;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;

import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.StoreIo;
import java.io.IOException;
import java.nio.channels.FileChannel;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Arrays;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A build that fails while writing (the disk fills up: the JDK's ENOSPC exception injected at the
 * k-th file the index creates) is refused naming the folder, leaves no folder behind, and the same
 * build run again succeeds.
 */
class BuildFailureTest {
  @TempDir Path tmp;

  /** The real file system, failing the {@code failAt}-th file creation. */
  private static StoreIo fullAt(int failAt) {
    int[] created = {0};
    return new StoreIo.Forwarding(StoreIo.REAL) {
      @Override
      public FileChannel create(Path file) throws IOException {
        if (created[0]++ == failAt) throw io.actindex.core.NoSpace.exception();
        return super.create(file);
      }
    };
  }

  @Test
  void failedBuildLeavesNothingAndTheRetrySucceeds() {
    long seed = Randoms.seed(0);
    SyntheticCodes.Sample s = SyntheticCodes.reluLike(120, 24, 16, seed);
    Path acts = TestFiles.npyFloat32(tmp.resolve("a.npy"), 120, 40, Arrays.copyOf(s.activations(), 120 * 40));
    // files a build creates: manifest-1.tmp, seg-0.codes, seg-0.tables, manifest-2.tmp
    for (int k = 0; k < 4; k++) {
      int failAt = k;
      Path out = tmp.resolve("idx-" + failAt);
      IndexBuilder.BuildParams p = new IndexBuilder.BuildParams(out, Source.activations(acts), null);
      io.actindex.core.BadInputException e =
          assertThrows(io.actindex.core.BadInputException.class, () -> IndexBuilder.build(p, null, fullAt(failAt)), "fail at " + failAt);
      org.assertj.core.api.Assertions.assertThat(e.getMessage()).startsWith("index " + out + ": no space left on device (")
          .containsAnyOf("the index was not created", "the index was not built, the folder was removed")
          .doesNotContain("as it was"); // there was no index before: nothing to keep "as it was"
      assertFalse(Files.exists(out), Randoms.describe(seed) + ": a failed build at file " + failAt + " left " + out);
      IndexBuilder.build(p, null);
      try (IndexReader r = IndexReader.open(out)) {
        assertEquals(120, r.liveCount());
      }
    }
    // into an empty folder the user made: the folder stays, empty
    Path mine = tmp.resolve("mine");
    IndexBuilder.BuildParams p = new IndexBuilder.BuildParams(mine, Source.activations(acts), null);
    io.actindex.core.BadInputException e = assertThrows(io.actindex.core.BadInputException.class, () -> {
      Files.createDirectories(mine);
      IndexBuilder.build(p, null, fullAt(1));
    });
    org.assertj.core.api.Assertions.assertThat(e.getMessage()).contains("the index was not built, the folder is empty again");
    org.assertj.core.api.Assertions.assertThat(mine).isEmptyDirectory();
  }
}
