package io.actindex.cli;

import static org.assertj.core.api.Assertions.assertThat;

import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Java reads the command line in the locale's character set: under the C locale (ASCII, a shell or
 * container with no LANG set) {@code nearest --where "key = café"} arrived as {@code caf} and two
 * U+FFFD, and answered with no rows and a note that the filter matched nothing, for a key the index
 * holds. Such an argument is refused, naming the locale and the way out.
 */
class LocaleEndToEndTest {
  @TempDir Path tmp;

  @Test
  void anArgumentTheLocaleCannotCarryIsRefused() throws Exception {
    String java = Path.of(System.getProperty("java.home"), "bin", "java").toString();
    ProcessBuilder pb = new ProcessBuilder(java, "-cp", System.getProperty("java.class.path"), Main.class.getName(), "nearest",
        "--index", tmp.resolve("idx").toString(), "--codes", tmp.resolve("q.npy").toString(), "--where", "key = café")
        .redirectOutput(ProcessBuilder.Redirect.DISCARD);
    pb.environment().keySet().removeIf(k -> k.startsWith("LC_") || k.equals("LANG"));
    pb.environment().put("LC_ALL", "C");
    Process p = pb.start();
    String err = new String(p.getErrorStream().readAllBytes(), StandardCharsets.UTF_8);
    assertThat(p.waitFor(120, TimeUnit.SECONDS)).isTrue();
    assertThat(p.exitValue()).as(err).isEqualTo(2);
    assertThat(err).contains("argument 7").contains("key = caf").contains("ANSI_X3.4-1968").contains("LC_ALL=C.UTF-8");

    // in a UTF-8 locale, or with only ASCII, nothing is refused
    assertThat(Main.garbledArgument("UTF-8", "--where", "key = \uFFFD")).isNull();
    assertThat(Main.garbledArgument("ANSI_X3.4-1968", "--where", "key = cafe")).isNull();
    assertThat(Main.garbledArgument("ANSI_X3.4-1968", "--where", "key = caf\uFFFD")).contains("argument 2");
  }
}
