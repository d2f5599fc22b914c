package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import java.nio.file.Path;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** A batch whose labels write the index's whole numbers as 3.0 (pandas, after a missing value) is added with a note. */
class LabelSpellingsEndToEndTest {
  @TempDir Path tmp;

  @Test
  void addNotesLabelsThatWriteTheIndexsNumbersAnotherWay() {
    boolean[][] codes = new boolean[6][16];
    for (int i = 0; i < 6; i++) codes[i][i] = true;
    Path idx = tmp.resolve("idx");
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), codes).toString(),
        "--meta", Files2.text(tmp.resolve("m.csv"), List.of("key,label", "a,0", "b,1", "c,1", "d,2", "e,0", "f,2")).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    assertThat(built.err()).doesNotContain("written two ways");
    Path batch = Files2.text(tmp.resolve("batch.csv"), List.of("key,label", "g,1.0", "h,", "i,2.0"));
    Cli.Result added = Cli.run("add", "--index", idx.toString(), "--codes", Files2.bits(tmp.resolve("c2.npy"), new boolean[3][16]).toString(),
        "--meta", batch.toString());
    assertThat(added.code()).as(added.describe()).isZero();
    assertThat(added.err()).as(added.describe()).contains(batch + ": note: label '1.0' and '1' in the index are the same number written two ways");
  }

  @Test
  void addNotesAWholeNumberTheIndexWritesWithZerosAroundIt() {
    boolean[][] codes = new boolean[4][16];
    for (int i = 0; i < 4; i++) codes[i][i] = true;
    Path idx = tmp.resolve("idx");
    Cli.Result built = Cli.run("build", "--out", idx.toString(), "--codes", Files2.bits(tmp.resolve("c.npy"), codes).toString(),
        "--meta", Files2.text(tmp.resolve("m.csv"), List.of("key,label", "a,3.00", "b,3.00", "c,07", "d,cat")).toString());
    assertThat(built.code()).as(built.describe()).isZero();
    Path batch = Files2.text(tmp.resolve("batch.csv"), List.of("key,label", "e,cat", "f,7"));
    Cli.Result added = Cli.run("add", "--index", idx.toString(), "--codes", Files2.bits(tmp.resolve("c2.npy"), new boolean[2][16]).toString(),
        "--meta", batch.toString());
    assertThat(added.code()).as(added.describe()).isZero();
    assertThat(added.err()).as(added.describe()).contains(batch + ": note: label '7' and '07' in the index are the same number written two ways");
  }

  /**
   * A metadata file that quotes every text cell (R's write.csv, spreadsheets) keeps the spaces inside
   * the quotes: "benign " beside "benign" were two labels with no word, splitting a class (a new
   * user's run: 67 of 400 labels). Build now notes it; add notes a batch label whose spaces the
   * index's label lacks; labels that differ in case are two labels and get no note (data, as written).
   */
  @Test
  void labelsThatDifferOnlyInTheSpacesAroundThemAreNoted() {
    boolean[][] codes = new boolean[6][16];
    for (int i = 0; i < 6; i++) codes[i][i] = true;
    Path npy = Files2.bits(tmp.resolve("c.npy"), codes);
    Path spaced = Files2.text(tmp.resolve("m.csv"), List.of("\"key\",\"label\"", "\"a\",\"benign\"", "\"b\",\"malignant\"",
        "\"c\",\"benign \"", "\"d\",\"benign\"", "\"e\",\"Benign\"", "\"f\",\"malignant\""));
    Cli.Result built = Cli.run("build", "--out", tmp.resolve("idx").toString(), "--codes", npy.toString(), "--meta", spaced.toString());
    assertThat(built.code()).as(built.describe()).isZero();
    assertThat(built.err()).as(built.describe()).contains(spaced + ": note: label 'benign ' and 'benign' earlier in the file differ only in the spaces"
        + " around them").contains("s.strip()");
    Path cased = Files2.text(tmp.resolve("m2.csv"), List.of("key,label", "a,benign", "b,Benign", "c,BENIGN", "d,x", "e,y", "f,\"x\""));
    Path idx = tmp.resolve("idx2");
    Cli.Result plain = Cli.run("build", "--out", idx.toString(), "--codes", npy.toString(), "--meta", cased.toString());
    assertThat(plain.code()).as(plain.describe()).isZero();
    assertThat(plain.err()).as(plain.describe()).doesNotContain("note: label");
    Path batch = Files2.text(tmp.resolve("batch.csv"), List.of("key,label", "g,\"  x\""));
    Cli.Result added = Cli.run("add", "--index", idx.toString(), "--codes", Files2.bits(tmp.resolve("c2.npy"), new boolean[1][16]).toString(),
        "--meta", batch.toString());
    assertThat(added.code()).as(added.describe()).isZero();
    assertThat(added.err()).as(added.describe()).contains(batch + ": note: label '  x' and 'x' in the index differ only in the spaces around them");
  }
}
