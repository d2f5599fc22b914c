package io.actindex.encode.mlp;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.encode.mlp.LayerOrder.From;
import io.actindex.encode.mlp.LayerOrder.Shape;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/** The forward order of a model's layers from given order, names and shapes. */
class LayerOrderTest {
  private static Shape s(String name, long out, long in) {
    return new Shape(name, out, in);
  }

  private static LayerOrder.Resolved resolve(List<Shape> layers) {
    return LayerOrder.resolve("m.safetensors", layers, null, -1);
  }

  @Test
  void namesThatDifferOnlyInTheirNumbersGiveTheOrderNaturally() {
    // square layers everywhere, so only the names can order them
    assertThat(resolve(List.of(s("10", 8, 8), s("2", 8, 8), s("0", 8, 8))).order()).containsExactly("0", "2", "10");
    assertThat(resolve(List.of(s("fc10", 8, 8), s("fc2", 8, 8), s("fc1", 8, 8))).order()).containsExactly("fc1", "fc2", "fc10");
    assertThat(resolve(List.of(s("net.4", 8, 8), s("net.0", 8, 8), s("net.2", 8, 8))).order()).containsExactly("net.0", "net.2", "net.4");
    assertThat(resolve(List.of(s("layer10", 8, 8), s("layer9", 8, 8))).order()).containsExactly("layer9", "layer10");
    assertThat(resolve(List.of(s("b1.2", 8, 8), s("b1.10", 8, 8), s("b0.7", 8, 8))).order()).containsExactly("b0.7", "b1.2", "b1.10");
    assertThat(resolve(List.of(s("fc2", 8, 8), s("fc1", 8, 8))).from()).isEqualTo(From.NAMES);
  }

  @Test
  void namesWithoutACommonPatternAreOrderedByShapesWhenOnlyOneOrderChains() {
    // input, hidden, output sorted alphabetically would be hidden, input, output: wrong
    LayerOrder.Resolved r = resolve(List.of(s("hidden", 16, 32), s("input", 32, 10), s("output", 3, 16)));
    assertThat(r.order()).containsExactly("input", "hidden", "output");
    assertThat(r.from()).isEqualTo(From.SHAPES);
    assertThat(resolve(List.of(s("out", 4, 20), s("fc2", 20, 30), s("fc1", 30, 12))).order()).containsExactly("fc1", "fc2", "out");
    assertThat(resolve(List.of(s("head", 2, 6), s("decoder", 6, 8), s("encoder", 8, 5))).order()).containsExactly("encoder", "decoder", "head");
  }

  @Test
  void squareLayersThatNamesCannotOrderAreRefusedWithTheCandidates() {
    List<Shape> square = List.of(s("fc1", 16, 16), s("fc2", 16, 16), s("out", 4, 16));
    assertThatThrownBy(() -> resolve(square)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("m.safetensors").hasMessageContaining("fc1,fc2,out").hasMessageContaining("fc2,fc1,out")
        .hasMessageContaining("`layerOrder`");
    // the input width breaks the tie when only one first layer takes it
    List<Shape> allSquare = List.of(s("input", 16, 16), s("hidden", 16, 16), s("output", 4, 16));
    assertThatThrownBy(() -> LayerOrder.resolve("m", allSquare, null, 16)).isInstanceOf(BadInputException.class).hasMessageContaining("several");
    List<Shape> distinct = List.of(s("hidden", 16, 16), s("input", 16, 7), s("output", 4, 16));
    assertThat(LayerOrder.resolve("m", distinct, null, 7).order()).containsExactly("input", "hidden", "output");
  }

  @Test
  void givenOrderIsCheckedAgainstTheShapesAndMustNameEveryLayerOnce() {
    List<Shape> square = List.of(s("fc1", 16, 16), s("fc2", 16, 16), s("out", 4, 16));
    LayerOrder.Resolved r = LayerOrder.resolve("m", square, List.of("fc2", "fc1", "out"), -1);
    assertThat(r.order()).containsExactly("fc2", "fc1", "out");
    assertThat(r.from()).isEqualTo(From.OPTION);
    assertThatThrownBy(() -> LayerOrder.resolve("m", square, List.of("fc1", "out", "fc2"), -1)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("does not chain").hasMessageContaining("fc2");
    assertThatThrownBy(() -> LayerOrder.resolve("m", square, List.of("fc1", "fc1", "out"), -1)).hasMessageContaining("twice");
    assertThatThrownBy(() -> LayerOrder.resolve("m", square, List.of("fc1", "out"), -1)).hasMessageContaining("leaves out fc2");
    assertThatThrownBy(() -> LayerOrder.resolve("m", square, List.of("fc1", "fc9", "out"), -1)).hasMessageContaining("'fc9'");
  }

  @Test
  void numberedNamesThatDoNotChainAreRefusedWithTheOrderTheShapesAllow() {
    // layer2 is applied first: the numbers do not tell the order here
    List<Shape> l = List.of(s("layer1", 4, 8), s("layer2", 8, 3));
    assertThatThrownBy(() -> resolve(l)).isInstanceOf(BadInputException.class).hasMessageContaining("does not chain")
        .hasMessageContaining("`layerOrder` layer2,layer1");
    assertThatThrownBy(() -> resolve(List.of(s("a", 4, 8), s("b", 5, 3)))).hasMessageContaining("no order of the layers");
  }

  /**
   * Kernels saved as [in, out] under PyTorch names (8 inputs, 16 hidden, 3 out: "0" [8, 16], "2"
   * [16, 3]) chain in the reverse order, 2 then 0, which cannot take the 8 inputs; the refusal
   * said "pass --layer-order 2,0". With the input width known it now says to transpose them.
   */
  @Test
  void weightsThatChainAsInOutFromTheInputWidthAreCalledTransposed() {
    List<Shape> kernels = List.of(s("0", 8, 16), s("2", 16, 3));
    assertThatThrownBy(() -> LayerOrder.resolve("m.safetensors", kernels, null, 8)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("m.safetensors").hasMessageContaining("does not chain").hasMessageContaining("[in, out]")
        .hasMessageContaining("transposed").hasMessageContaining("input width 8").hasMessageNotContaining("`layerOrder` 2,0");
    // another input width, or none known: the order the shapes allow, as before
    for (long width : new long[] {3, -1})
      assertThatThrownBy(() -> LayerOrder.resolve("m.safetensors", kernels, null, width)).as("width %d", width)
          .hasMessageContaining("`layerOrder` 2,0").hasMessageNotContaining("transposed");
  }

  /**
   * The same under names that give no order (fc1, fc2, fc3, head of an 11 -> 48 -> 100 -> 17 -> 5
   * network saved as [in, out], no biases): the one order of the shapes, head first, takes 5 inputs;
   * the refusal named head's width ("rows have 11 values but the model (layer 'head') takes 5"). With
   * the input width known it now says to transpose them and names the order they chain in from it.
   */
  @Test
  void unnumberedWeightsThatChainOnlyAsInOutFromTheInputWidthAreCalledTransposed() {
    List<Shape> kernels = List.of(s("fc1", 11, 48), s("fc2", 48, 100), s("fc3", 100, 17), s("head", 17, 5));
    assertThatThrownBy(() -> LayerOrder.resolve("m.safetensors", kernels, null, 11)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("m.safetensors: no order of the weights").hasMessageContaining("starts with the input width 11")
        .hasMessageContaining("they chain as fc1,fc2,fc3,head from it").hasMessageContaining("np.ascontiguousarray(W.T)");
    // no input width known (a stored order is used then): the one order of the shapes, as before
    assertThat(LayerOrder.resolve("m.safetensors", kernels, null, -1).order()).containsExactly("head", "fc3", "fc2", "fc1");
    // stored right, the input width picks the order; another width that neither reading starts with: the order of the shapes
    List<Shape> right = kernels.stream().map(k -> s(k.name(), k.in(), k.out())).toList();
    assertThat(LayerOrder.resolve("m.safetensors", right, null, 11).order()).containsExactly("fc1", "fc2", "fc3", "head");
    assertThat(LayerOrder.resolve("m.safetensors", right, null, 7).order()).containsExactly("fc1", "fc2", "fc3", "head");
  }

  @Test
  void shapeSearchFindsTheHiddenChainOfShuffledDistinctWidths() {
    long seed = new Random().nextLong();
    Random rnd = new Random(seed);
    for (int trial = 0; trial < 200; trial++) {
      int n = 2 + rnd.nextInt(9);
      List<Long> widths = new ArrayList<>();
      for (long w = 1 + rnd.nextInt(4); widths.size() <= n; w += 1 + rnd.nextInt(5)) widths.add(w);
      Collections.shuffle(widths, rnd); // distinct widths: exactly one chain exists
      List<Shape> chain = new ArrayList<>();
      for (int i = 0; i < n; i++) chain.add(s("w" + (char) ('a' + rnd.nextInt(26)) + i + "x", widths.get(i + 1), widths.get(i)));
      List<Shape> shuffled = new ArrayList<>(chain);
      Collections.shuffle(shuffled, rnd);
      // random letters: the names rarely share a pattern (when they do, their numbers follow the chain)
      LayerOrder.Resolved r = LayerOrder.resolve("m", shuffled, null, widths.getFirst());
      List<String> expected = chain.stream().map(Shape::name).toList();
      assertThat(r.order()).as("seed %x trial %d", seed, trial).containsExactlyElementsOf(expected);
    }
  }
}
