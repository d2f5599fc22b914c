package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThatThrownBy;
import static org.junit.jupiter.api.Assertions.assertEquals;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.util.List;
import org.junit.jupiter.api.Test;

class LayersTest {
  static final CodeLayout SOURCE = CodeLayout.parse("a:50,b:30,c:70");
  static final CodeLayout INDEX = CodeLayout.parse("a:50,c:70");

  /** The refusal names the option and the layers there are, and says "index" only where there is one (compare has none). */
  @Test
  void anUnknownLayerIsRefusedNamingTheOption() {
    assertThatThrownBy(() -> Layers.select(SOURCE, List.of("a", "z"))).isInstanceOf(BadInputException.class)
        .hasMessage("layers: unknown layer 'z' (the layers are a, b, c)");
    assertThatThrownBy(() -> Layers.select(SOURCE, List.of("b", "b"))).isInstanceOf(BadInputException.class)
        .hasMessage("layers: layer 'b' is chosen twice");
  }

  @Test
  void projectKeepsTheNamedSegmentsBitForBit() {
    long seed = Randoms.seed(1);
    CodeBlock flat = SyntheticCodes.uniform(40, 150, seed);
    CodeBlock src = Layers.relabel(flat, SOURCE);
    CodeBlock got = Layers.project(src, INDEX);
    for (int i = 0; i < 40; i++) {
      for (int b = 0; b < 50; b++) assertEquals(src.bit(i, b), got.bit(i, b), Randoms.describe(seed));
      for (int b = 0; b < 70; b++) assertEquals(src.bit(i, 80 + b), got.bit(i, 50 + b), Randoms.describe(seed));
    }
    // a single-segment file of the source's width is read as the source layout, then projected
    assertEquals(got.layout(), Layers.align(flat, INDEX, SOURCE, "q.npy", Source.Kind.CODES).layout());
    assertEquals(java.util.Arrays.toString(got.words()), java.util.Arrays.toString(Layers.align(flat, INDEX, SOURCE, "q.npy", Source.Kind.CODES).words()));
  }

  @Test
  void alignRefusesOtherWidthsSayingExpectedAndGot() {
    CodeBlock wrong = SyntheticCodes.uniform(3, 119, 7);
    assertThatThrownBy(() -> Layers.align(wrong, INDEX, SOURCE, "q.npy", Source.Kind.CODES)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("q.npy").hasMessageContaining("119 bits").hasMessageContaining("a:50,c:70 (120 bits)");
    // the message names what was given: activations are columns, inputs give codes through the model
    assertThatThrownBy(() -> Layers.align(wrong, INDEX, SOURCE, "q.npy", Source.Kind.ACTIVATIONS))
        .hasMessageStartingWith("q.npy: the activations have layout bits:119 (119 columns, one per unit); the index expects a:50,c:70");
    assertThatThrownBy(() -> Layers.align(wrong, INDEX, SOURCE, "q.npy", Source.Kind.INPUTS))
        .hasMessageStartingWith("q.npy: through the model these inputs give codes of layout bits:119 (119 bits); the index expects a:50,c:70");
    assertThatThrownBy(() -> Layers.align(wrong, INDEX, SOURCE, "q.npy", Source.Kind.CODES))
        .hasMessageStartingWith("q.npy: the codes have layout bits:119 (119 bits); the index expects a:50,c:70");
    CodeBlock swapped = Layers.relabel(SyntheticCodes.uniform(3, 120, 7), CodeLayout.parse("c:70,a:50"));
    assertEquals(INDEX, Layers.align(swapped, INDEX, SOURCE, "q.npz", Source.Kind.CODES).layout()); // found by name
    // the index's widths in its order under other names: refused, with a hint to rename (not matched by position)
    CodeBlock other = Layers.relabel(SyntheticCodes.uniform(3, 120, 7), CodeLayout.parse("x:50,y:70"));
    assertThatThrownBy(() -> Layers.align(other, INDEX, SOURCE, "q.npz", Source.Kind.CODES)).isInstanceOf(BadInputException.class)
        .hasMessageContaining("save them under the names a, c");
    CodeBlock otherWidths = Layers.relabel(SyntheticCodes.uniform(3, 120, 7), CodeLayout.parse("x:60,y:60"));
    assertThatThrownBy(() -> Layers.align(otherWidths, INDEX, SOURCE, "q.npz", Source.Kind.CODES)).isInstanceOf(BadInputException.class)
        .hasMessageNotContaining("save them under");
  }

  @Test
  void neuronNamesAndLayerSelection() {
    assertEquals("a:49", Layers.neuron(SOURCE, 49));
    assertEquals("b:0", Layers.neuron(SOURCE, 50));
    assertEquals("c:69", Layers.neuron(SOURCE, 149));
    long[] bits = new long[SOURCE.words()];
    bits[0] |= 1L << 3;
    bits[1] |= 1L << (79 - 64) | 1L << (80 - 64);
    assertEquals(List.of("a:3", "b:29", "c:0"), Layers.neurons(SOURCE, bits));
    assertEquals(List.of(2, 0), java.util.Arrays.stream(Layers.select(SOURCE, List.of("c", "a"))).boxed().toList());
    assertThatThrownBy(() -> Layers.select(SOURCE, List.of("d"))).isInstanceOf(BadInputException.class)
        .hasMessageContaining("'d'").hasMessageContaining("a, b, c");
    assertThatThrownBy(() -> Layers.select(SOURCE, List.of("a", "a"))).hasMessageContaining("twice");
  }
}
