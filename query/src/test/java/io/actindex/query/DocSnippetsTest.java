package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.Randoms;
import io.actindex.index.store.IndexReader;
import java.io.IOException;
import java.io.StringWriter;
import java.net.URL;
import java.net.URLClassLoader;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import java.util.zip.ZipEntry;
import java.util.zip.ZipOutputStream;
import javax.tools.JavaCompiler;
import javax.tools.StandardJavaFileManager;
import javax.tools.ToolProvider;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The Java blocks of docs/java-api.md, then those of the fidelity and compare pages, compiled as
 * written (wrapped in a method, with wildcard imports of the project's packages) and run in that
 * order on generated files, so the pages keep compiling and running. The only change to a block:
 * {@code Path.of("NAME")} becomes a file of the test's folder. The compare page's {@code codesA} and
 * {@code codesB} (codes already in memory) are declared before its block, as halves of the index.
 * export-edge.md's block is left out: it needs a bundle exported with a model.
 */
class DocSnippetsTest {
  @TempDir Path tmp;

  private static final String IMPORTS = "import io.actindex.core.*; import io.actindex.encode.*; import io.actindex.index.meta.*; import io.actindex.index.store.*;"
      + " import io.actindex.query.*; import java.nio.file.Path; import java.util.List;\n";

  @Test
  void javaBlocksOfTheDocsCompileAndRun() throws Exception {
    long seed = Randoms.seed(0);
    SplittableRandom rnd = new SplittableRandom(seed);
    npz(tmp.resolve("train.npz"), 300, rnd);
    npz(tmp.resolve("more.npz"), 40, rnd);
    npz(tmp.resolve("test.npz"), 20, rnd);
    TestFiles.npyFloat32(tmp.resolve("train_acts.npy"), 200, 22, values(200 * 22, rnd, 0));
    TestFiles.npyFloat32(tmp.resolve("week_acts.npy"), 150, 22, values(150 * 22, rnd, 0.5));
    StringBuilder csv = new StringBuilder("id,class,split\n");
    for (int i = 0; i < 300; i++) csv.append("e").append(i).append(",c").append(i % 3).append(',').append(i % 4 == 0 ? "test" : "train").append('\n');
    TestFiles.csv(tmp.resolve("train.csv"), csv.toString());

    Path root = repositoryRoot();
    List<String> blocks = new ArrayList<>(javaBlocks(root.resolve("docs/java-api.md")));
    blocks.addAll(javaBlocks(root.resolve("docs/commands/fidelity.md")));
    List<String> compare = javaBlocks(root.resolve("docs/commands/compare.md"));
    assertThat(blocks).as("Java blocks of java-api.md and fidelity.md").hasSize(3);
    assertThat(compare).as("Java blocks of compare.md").hasSize(1);
    blocks.add("CodeBlock codesA, codesB;\n"
        + "try (IndexReader all = IndexReader.open(Path.of(\"idx\"))) { CodeBlock c = all.liveCodes(null);\n"
        + "  codesA = c.slice(0, c.size() / 2); codesB = c.slice(c.size() / 2, c.size()); }\n" + compare.get(0));

    Path src = Files.createDirectories(tmp.resolve("src")), classes = Files.createDirectories(tmp.resolve("classes"));
    List<String> files = new ArrayList<>();
    for (int i = 0; i < blocks.size(); i++) {
      String body = blocks.get(i).replace("Path.of(\"", "Here.DIR.resolve(\"");
      Path f = src.resolve("Snippet" + i + ".java");
      Files.writeString(f, IMPORTS + "public class Snippet" + i + " { public static void run() throws Exception {\n" + body + "\n} }\n");
      files.add(f.toString());
    }
    Files.writeString(src.resolve("Here.java"), "public class Here { public static java.nio.file.Path DIR; }\n");
    files.add(src.resolve("Here.java").toString());
    JavaCompiler javac = ToolProvider.getSystemJavaCompiler();
    StringWriter errors = new StringWriter();
    boolean compiled;
    try (StandardJavaFileManager fm = javac.getStandardFileManager(null, null, null)) {
      compiled = javac.getTask(errors, fm, null, List.of("-proc:none", "-d", classes.toString(), "-cp", classPath()), null,
          fm.getJavaFileObjectsFromStrings(files)).call();
    }
    assertThat(compiled).as("the docs' Java blocks compile:\n" + errors).isTrue();

    try (URLClassLoader loader = new URLClassLoader(new URL[] {classes.toUri().toURL()}, getClass().getClassLoader())) {
      loader.loadClass("Here").getField("DIR").set(null, tmp);
      for (int i = 0; i < blocks.size(); i++) loader.loadClass("Snippet" + i).getMethod("run").invoke(null);
    }
    try (IndexReader r = IndexReader.open(tmp.resolve("idx"))) {
      assertThat(r.maxId()).as("train.npz and more.npz rows, seed " + Randoms.describe(seed)).isEqualTo(340);
    }
  }

  /** Two layers, fc1 (12 units) and fc2 (10), of standard normal float32 activations. */
  private static void npz(Path file, int rows, SplittableRandom rnd) throws IOException {
    try (ZipOutputStream zip = new ZipOutputStream(Files.newOutputStream(file))) {
      for (String layer : List.of("fc1", "fc2")) {
        int cols = layer.equals("fc1") ? 12 : 10;
        Path one = TestFiles.npyFloat32(file.resolveSibling(layer + ".npy"), rows, cols, values(rows * cols, rnd, 0));
        zip.putNextEntry(new ZipEntry(layer + ".npy"));
        zip.write(Files.readAllBytes(one));
        zip.closeEntry();
        Files.delete(one);
      }
    }
  }

  private static float[] values(int n, SplittableRandom rnd, double shift) {
    float[] v = new float[n];
    for (int i = 0; i < n; i++) v[i] = (float) (gaussian(rnd) + shift);
    return v;
  }

  private static double gaussian(SplittableRandom rnd) {
    return Math.sqrt(-2 * Math.log(1 - rnd.nextDouble())) * Math.cos(2 * Math.PI * rnd.nextDouble());
  }

  private static List<String> javaBlocks(Path page) throws IOException {
    List<String> out = new ArrayList<>();
    Matcher m = Pattern.compile("(?s)```java\\n(.*?)```").matcher(Files.readString(page));
    while (m.find()) out.add(m.group(1));
    return out;
  }

  /** Surefire's test class path (java.class.path may be its booter jar). */
  private static String classPath() {
    String cp = System.getProperty("surefire.test.class.path");
    return cp != null && !cp.isBlank() ? cp : System.getProperty("java.class.path");
  }

  private static Path repositoryRoot() {
    for (Path d = Path.of("").toAbsolutePath(); d != null; d = d.getParent())
      if (Files.exists(d.resolve("docs/java-api.md"))) return d;
    throw new IllegalStateException("no docs/java-api.md above " + Path.of("").toAbsolutePath());
  }
}
