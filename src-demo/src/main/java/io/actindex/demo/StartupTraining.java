package io.actindex.demo;

import io.actindex.cli.Main;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import io.actindex.encode.mlp.Mlp;
import java.io.IOException;
import java.io.PrintWriter;
import java.io.Writer;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.Map;
import java.util.Random;
import java.util.stream.Stream;
import org.ejml.data.DMatrixRMaj;

/**
 * The run {@code bin/actindex} makes once per build and JDK to record a class archive
 * ({@code -XX:ArchiveClassesAtExit}): every common command once, in this process, on a few hundred
 * invented rows in a temporary folder, so that the archive holds the classes real commands load.
 * Later runs map the archive and skip loading and verifying those classes from the jar (about
 * 0.4-0.6 s less per command: docs/benchmarks.md, "Start-up of the command line"). Prints nothing;
 * exits 0 when every command ran, 1 otherwise (then the script keeps no archive).
 */
public final class StartupTraining {
  private static final int ROWS = 400, INPUTS = 8, HIDDEN = 24;

  private StartupTraining() {}

  public static void main(String[] args) throws IOException {
    Path dir = Files.createTempDirectory("actindex-startup");
    boolean ok;
    try {
      ok = run(dir);
    } finally {
      try (Stream<Path> s = Files.walk(dir)) {
        for (Path p : s.sorted(Comparator.reverseOrder()).toList()) Files.deleteIfExists(p);
      }
    }
    System.exit(ok ? 0 : 1);
  }

  /** Runs the commands in {@code dir} (an empty folder); true when each exited 0. */
  static boolean run(Path dir) throws IOException {
    Random rnd = new Random(2026);
    Mlp mlp = new Mlp(List.of(layer("0", INPUTS, HIDDEN, rnd), layer("1", HIDDEN, HIDDEN, rnd), layer("2", HIDDEN, 3, rnd)));
    mlp.save(dir.resolve("model.safetensors"), Map.of());
    inputs(dir.resolve("train.npy"), ROWS, rnd);
    inputs(dir.resolve("new.npy"), ROWS / 4, rnd);
    inputs(dir.resolve("held-out.npy"), ROWS / 4, rnd);
    List<String> meta = new ArrayList<>(List.of("key,label,split"));
    for (int i = 0; i < ROWS; i++) meta.add("w" + i + "," + (char) ('a' + i % 3) + "," + (i % 5 == 0 ? "test" : "train"));
    Files.write(dir.resolve("meta.csv"), meta, StandardCharsets.UTF_8);
    String index = dir.resolve("index").toString(), model = dir.resolve("model.safetensors").toString();
    String train = dir.resolve("train.npy").toString(), fresh = dir.resolve("new.npy").toString();
    String[][] commands = {
        {"build", "--out", index, "--model", model, "--inputs", train, "--meta", dir.resolve("meta.csv").toString()},
        {"fidelity", "--index", index, "--inputs", train, "-k", "1"},
        {"add", "--index", index, "--inputs", fresh},
        {"info", "--index", index},
        {"nearest", "--index", index, "--inputs", fresh, "-k", "5", "--format", "json"},
        {"region", "--index", index, "--inputs", fresh, "--rows", "0"},
        {"census", "--index", index},
        {"dupes", "--index", index, "--radius", "1", "--cross-split"},
        {"ood", "calibrate", "--index", index, "--inputs", dir.resolve("held-out.npy").toString()},
        {"ood", "score", "--index", index, "--inputs", fresh, "--format", "csv"},
        {"compare", "--index", index, "--a-where", "split = train", "--b-where", "split = test"},
        {"delete", "--index", index, "--where", "split = test"},
        {"compact", "--index", index},
        {"check", "--index", index},
        {"export-codes", "--index", index, "--out", dir.resolve("codes.npy").toString()},
        {"report", "--index", index, "--out", dir.resolve("report.html").toString()},
    };
    boolean ok = true;
    PrintWriter none = new PrintWriter(Writer.nullWriter());
    for (String[] c : commands) ok &= Main.run(none, none, c) == 0;
    return ok;
  }

  private static Mlp.Layer layer(String name, int in, int out, Random rnd) {
    DMatrixRMaj w = new DMatrixRMaj(out, in);
    for (int i = 0; i < w.data.length; i++) w.data[i] = rnd.nextGaussian() / Math.sqrt(in);
    double[] b = new double[out];
    for (int i = 0; i < out; i++) b[i] = 0.1 * rnd.nextGaussian();
    return new Mlp.Layer(name, w, b);
  }

  private static void inputs(Path file, int rows, Random rnd) throws IOException {
    try (NpyWriter w = NpyWriter.create(file, NpyDtype.FLOAT32, INPUTS)) {
      float[] row = new float[INPUTS];
      for (int r = 0; r < rows; r++) {
        for (int i = 0; i < INPUTS; i++) row[i] = (float) rnd.nextGaussian();
        w.write(row, 1);
      }
      w.commit();
    }
  }
}
