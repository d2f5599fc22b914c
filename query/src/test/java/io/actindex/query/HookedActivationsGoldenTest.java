package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import io.actindex.index.store.IndexReader;
import java.net.URISyntaxException;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Activations a PyTorch user hooks on the Linear layers of a model (before ReLU) against an index
 * built from that model, whose kept magnitudes are after ReLU. The codes never differed (on means
 * above 0 either way), but the values did: {@code nearest --refine} and the refined OOD score
 * ranked by cosines against negative values the model never passes on, and {@code add} kept them,
 * with exit code 0. Now they are taken through ReLU, with a note.
 *
 * <p>Reference: PyTorch 2.13.0 forward hooks on {@code torch.nn.Linear} (y = x W^T + b, before
 * ReLU) and on {@code torch.nn.ReLU} (max(0, y)) of one {@code nn.Sequential}, written by {@code
 * tools/golden/make_hooked_activations.py} (versions in {@code golden/hooked/VERSIONS.txt}).
 */
class HookedActivationsGoldenTest {
  @TempDir Path tmp;

  static Path golden(String name) {
    try {
      var url = HookedActivationsGoldenTest.class.getResource("/golden/hooked/" + name);
      if (url == null) throw new IllegalStateException("missing golden file " + name);
      return Path.of(url.toURI());
    } catch (URISyntaxException e) {
      throw new IllegalStateException(e);
    }
  }

  private Path build(String name) {
    Path dir = tmp.resolve(name);
    IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.inputs(golden("inputs.npy"), golden("model.safetensors")), null), null);
    return dir;
  }

  @Test
  void activationsHookedBeforeReluAreTakenThroughReluAgainstAModelIndex() {
    Path dir = build("idx");
    try (IndexReader r = IndexReader.open(dir)) {
      QuerySource.Queries pre = QuerySource.loadWithActivations(r, Source.activations(golden("queries_pre.npz")), RowRange.ALL, null);
      QuerySource.Queries post = QuerySource.loadWithActivations(r, Source.activations(golden("queries_post.npz")), RowRange.ALL, null);
      QuerySource.Queries inputs = QuerySource.loadWithActivations(r, Source.inputs(golden("queries.npy"), null), RowRange.ALL, null);
      assertThat(post.activations()).hasSize(12 * 18);
      // PyTorch's ReLU output, value for value
      assertThat(pre.activations()).containsExactly(post.activations());
      assertThat(pre.codes().codes().words()).containsExactly(post.codes().codes().words());
      assertThat(inputs.codes().codes().words()).containsExactly(post.codes().codes().words());
      for (int i = 0; i < post.activations().length; i++)
        assertThat(inputs.activations()[i]).as("value %d", i).isCloseTo(post.activations()[i], within(1e-5f));
      assertThat(pre.codes().notes()).anySatisfy(n -> assertThat(n).contains("queries_pre.npz").contains("after ReLU").contains("taken as 0"));
      assertThat(post.codes().notes()).noneSatisfy(n -> assertThat(n).contains("taken as 0"));
    }
  }

  /**
   * The hooked layers side by side in one array (np.concatenate([h0, h2], axis=1)) are read
   * column by column as the index's layers in its order; nothing could tell a wrong order of
   * equal total width, so a note now says how the columns were split.
   */
  @Test
  void oneArrayOfEveryLayerIsSplitInLayoutOrderWithANote() {
    Path dir = build("one");
    try (IndexReader r = IndexReader.open(dir)) {
      QuerySource.Queries post = QuerySource.loadWithActivations(r, Source.activations(golden("queries_post.npz")), RowRange.ALL, null);
      Path joined = TestFiles.npyFloat32(tmp.resolve("joined.npy"), 12, 18, post.activations());
      QuerySource.Queries one = QuerySource.loadWithActivations(r, Source.activations(joined), RowRange.ALL, null);
      assertThat(one.codes().codes().words()).containsExactly(post.codes().codes().words());
      assertThat(one.activations()).containsExactly(post.activations());
      assertThat(one.codes().notes()).anySatisfy(n -> assertThat(n).contains("joined.npy").contains("18 columns").contains("0:10,2:8"));
      assertThat(post.codes().notes()).noneSatisfy(n -> assertThat(n).contains("side by side"));
    }
  }

  @Test
  void addKeepsTheSameMagnitudesFromActivationsBeforeOrAfterRelu() {
    Path a = build("a"), b = build("b");
    IndexBuilder.Result added = IndexBuilder.add(new IndexBuilder.AddParams(a, Source.activations(golden("queries_pre.npz")), null, 0, 1), null);
    IndexBuilder.add(new IndexBuilder.AddParams(b, Source.activations(golden("queries_post.npz")), null, 0, 1), null);
    assertThat(added.notes()).anySatisfy(n -> assertThat(n).contains("taken as 0"));
    try (IndexReader ra = IndexReader.open(a); IndexReader rb = IndexReader.open(b)) {
      float[] x = new float[18], y = new float[18];
      for (int id = 40; id < 52; id++) {
        assertThat(ra.magnitudes(id, x, 0)).isTrue();
        assertThat(rb.magnitudes(id, y, 0)).isTrue();
        assertThat(x).as("id %d", id).containsExactly(y);
      }
    }
  }

  /**
   * The same one array against an index that keeps two layers by name, in another order ({@code
   * build --layers 2,0}), and against one binarized by per-layer medians: it was refused (a single
   * matrix "is one layer, but layers [2, 0] were asked for"; "no per-neuron medians for layer
   * act"), although the reference says one array as wide as the index's layers is read as those
   * layers side by side. It must give what the archive's members give, matched by name.
   */
  @Test
  void oneArrayIsReadSideBySideAgainstLayersKeptByNameOrBinarizedByMedians() {
    Path byName = tmp.resolve("byname");
    IndexBuilder.build(new IndexBuilder.BuildParams(byName, Source.inputs(golden("inputs.npy"), golden("model.safetensors")), null,
        new io.actindex.encode.EncodeOptions(io.actindex.encode.BinarizeRule.POSITIVE, 0, java.util.List.of("2", "0")), null, 0, -1, 0), null);
    Path medians = tmp.resolve("medians");
    IndexBuilder.build(new IndexBuilder.BuildParams(medians, Source.activations(golden("queries_post.npz")), null,
        new io.actindex.encode.EncodeOptions(io.actindex.encode.BinarizeRule.MEDIAN, 0, null), null, 0, -1, 0), null);
    for (Path dir : java.util.List.of(byName, medians))
      try (IndexReader r = IndexReader.open(dir)) {
        QuerySource.Queries post = QuerySource.loadWithActivations(r, Source.activations(golden("queries_post.npz")), RowRange.ALL, null);
        Path joined = TestFiles.npyFloat32(tmp.resolve(dir.getFileName() + ".npy"), 12, 18, post.activations());
        QuerySource.Queries one = QuerySource.loadWithActivations(r, Source.activations(joined), RowRange.ALL, null);
        assertThat(one.codes().codes().words()).as("%s", dir).containsExactly(post.codes().codes().words());
        assertThat(one.activations()).as("%s", dir).containsExactly(post.activations());
        assertThat(one.codes().notes()).anySatisfy(n -> assertThat(n).contains("18 columns").contains(r.layout().toString()));
      }
  }
}
