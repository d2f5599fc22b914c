import io.actindex.cli.Main;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStreamReader;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.security.MessageDigest;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Comparator;
import java.util.HexFormat;
import java.util.List;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.TimeoutException;
import java.util.stream.Stream;

/**
 * Runs command lines of the option-value audit in one JVM (tools/audit/option_values.py writes
 * them and reads what this prints). Input on stdin, one case a line, tab separated:
 * {@code ID  DIR  PRISTINE  ARG...}: DIR is a folder hashed before and after ("-": none), PRISTINE
 * a copy DIR is restored from after a run that changed it ("-": none). Output: one JSON object a
 * line (id, exit, stdout length, stderr, whether DIR is unchanged, milliseconds). A run longer
 * than the timeout (first argument, seconds) is reported and the JVM exits with 3, so the driver
 * starts a new one for the remaining cases.
 *
 * <p>Run: {@code java -cp src-demo/target/actindex.jar tools/audit/OptionValuesRunner.java 120 < cases.tsv}
 */
public final class OptionValuesRunner {
  public static void main(String[] args) throws Exception {
    long timeout = Long.parseLong(args[0]);
    ExecutorService pool = Executors.newSingleThreadExecutor(r -> {
      Thread t = new Thread(r);
      t.setDaemon(true);
      return t;
    });
    BufferedReader in = new BufferedReader(new InputStreamReader(System.in, StandardCharsets.UTF_8));
    PrintWriter res = new PrintWriter(new java.io.OutputStreamWriter(System.out, StandardCharsets.UTF_8), true);
    for (String line; (line = in.readLine()) != null; ) {
      if (line.isEmpty()) continue;
      String[] f = line.split("\t", -1);
      String id = f[0];
      Path dir = f[1].equals("-") ? null : Path.of(f[1]);
      Path pristine = f[2].equals("-") ? null : Path.of(f[2]);
      String[] cmd = Arrays.copyOfRange(f, 3, f.length);
      String before = dir == null ? null : hash(dir);
      StringWriter out = new StringWriter();
      StringWriter err = new StringWriter();
      long t0 = System.nanoTime();
      Future<Integer> run = pool.submit(() -> Main.run(new PrintWriter(out), new PrintWriter(err), cmd));
      int code;
      try {
        code = run.get(timeout, TimeUnit.SECONDS);
      } catch (TimeoutException e) {
        res.println("{\"id\":" + json(id) + ",\"exit\":\"timeout\",\"stdout\":0,\"stderr\":" + json(err.toString())
            + ",\"unchanged\":null,\"ms\":" + timeout * 1000 + "}");
        System.exit(3);
        return;
      }
      long ms = (System.nanoTime() - t0) / 1_000_000;
      String after = dir == null ? null : hash(dir);
      Boolean unchanged = dir == null ? null : before.equals(after);
      if (dir != null && pristine != null && !unchanged) restore(pristine, dir);
      res.println("{\"id\":" + json(id) + ",\"exit\":" + code + ",\"stdout\":" + out.toString().length()
          + ",\"stderr\":" + json(err.toString()) + ",\"unchanged\":" + unchanged + ",\"ms\":" + ms + "}");
    }
    System.exit(0);
  }

  /** SHA-256 over every file's relative path and bytes, in path order. */
  static String hash(Path dir) throws IOException {
    if (!Files.exists(dir)) return "absent";
    try (Stream<Path> s = Files.walk(dir)) {
      List<Path> files = new ArrayList<>(s.filter(Files::isRegularFile).sorted().toList());
      MessageDigest md = MessageDigest.getInstance("SHA-256");
      for (Path p : files) {
        md.update(dir.relativize(p).toString().getBytes(StandardCharsets.UTF_8));
        md.update((byte) 0);
        md.update(Files.readAllBytes(p));
        md.update((byte) 0);
      }
      return HexFormat.of().formatHex(md.digest());
    } catch (java.security.NoSuchAlgorithmException e) {
      throw new IllegalStateException(e);
    }
  }

  static void restore(Path pristine, Path dir) throws IOException {
    if (Files.exists(dir))
      try (Stream<Path> s = Files.walk(dir)) {
        for (Path p : s.sorted(Comparator.reverseOrder()).toList()) Files.delete(p);
      }
    try (Stream<Path> s = Files.walk(pristine)) {
      for (Path p : s.sorted().toList())
        Files.copy(p, dir.resolve(pristine.relativize(p).toString()), StandardCopyOption.COPY_ATTRIBUTES);
    }
  }

  static String json(String s) {
    StringBuilder b = new StringBuilder("\"");
    for (char c : s.toCharArray()) {
      if (c == '"' || c == '\\') b.append('\\').append(c);
      else if (c < 0x20) b.append(String.format("\\u%04x", (int) c));
      else b.append(c);
    }
    return b.append('"').toString();
  }
}
