package io.actindex.core;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * A layer name in two Unicode forms is one name (core {@link Names}): the layout's duplicate check
 * compared names exactly, so "café" written with a combining accent (NFD) beside the precomposed
 * one (NFC) passed as two layers, and a typed {@code --code-layout} kept its NFD names while every
 * name read from a file is NFC (the two forms: Unicode Standard Annex #15, from memory).
 */
class CodeLayoutNamesTest {
  static final String NFD = "cafe\u0301", NFC = "caf\u00e9";

  @Test
  void oneNameInTwoUnicodeFormsIsRefusedAsTwice() {
    assertThat(NFD).isNotEqualTo(NFC);
    assertThatThrownBy(() -> new CodeLayout(List.of(new CodeLayout.Segment(NFD, 3), new CodeLayout.Segment(NFC, 4))))
        .isInstanceOf(IllegalArgumentException.class).hasMessageContaining("appears twice (written in two Unicode forms)");
    for (String spec : List.of(NFD + ":3," + NFC + ":4", "a:1," + NFC + ":3,b:2," + NFD + ":4"))
      for (boolean typed : new boolean[] {false, true})
        assertThatThrownBy(() -> {
          CodeLayout unused = typed ? CodeLayout.parseTyped(spec) : CodeLayout.parse(spec);
        }).as(spec).hasMessageContaining("appears twice");
    assertThatThrownBy(() -> CodeLayout.parse("a:1,a:2")).hasMessage("segment name 'a' appears twice");
    assertThat(CodeLayout.parse(NFC + ":3,cafe:4").segments()).hasSize(2); // an accent makes another name
  }

  @Test
  void typedLayoutNamesAreNfcAndStoredOnesKeptAsWritten() {
    CodeLayout typed = CodeLayout.parseTyped(" " + NFD + " :3,b:2");
    assertThat(typed.segments().get(0).name()).isEqualTo(NFC);
    assertThat(typed).isEqualTo(CodeLayout.parse(NFC + ":3,b:2"));
    assertThat(typed.hash()).isEqualTo(CodeLayout.parse(NFC + ":3,b:2").hash());
    // a stored layout (a manifest's) is read as written: its hash is in file headers
    CodeLayout stored = CodeLayout.parse(NFD + ":3,b:2");
    assertThat(stored.segments().get(0).name()).isEqualTo(NFD);
    assertThat(stored.indexOf(NFC)).isZero();
  }
}
